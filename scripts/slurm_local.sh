#!/usr/bin/env bash
# Install (only if missing) and start a one-node SLURM cluster on localhost,
# so that `sbatch` (job arrays included) runs jobs on this machine.
#
# Idempotent: a second run checks munge, the config and the daemons, changes
# nothing and returns in about a second.  Works as root without systemd and
# without cgroups (containers, CI).  Not root: re-runs itself with `sudo -n`.
# Exit 0 when the node is up (idle/mixed/allocated); otherwise one line
# "slurm_local: cannot start SLURM: REASON" on stderr and exit 1.
# Every wait is bounded.
#
# Without accounting storage, job states are read with
#   squeue -h -t all -j JOB -o '%i %T'     (finished jobs stay MinJobAge=3600 s)
#   scontrol show job JOB_TASK             (JobState=..., ExitCode=...)
#   sacct -j JOB                           (from the jobcomp/filetxt log below)
set -u
export LC_ALL=C

MARK="# written by outcouple scripts/slurm_local.sh"
CONF_DIR=/etc/slurm
CONF=$CONF_DIR/slurm.conf
NODE=localhost
LOG_DIR=/var/log/slurm
CTLD_SPOOL=/var/spool/slurmctld
SLURMD_SPOOL=/var/spool/slurmd
MUNGE_KEY=/etc/munge/munge.key
WAIT_S=${SLURM_LOCAL_WAIT:-60}

die() { echo "slurm_local: cannot start SLURM: $*" >&2; exit 1; }
say() { echo "slurm_local: $*"; }

# ---------------------------------------------------------------- privileges
if [ "$(id -u)" != 0 ]; then
    command -v sudo >/dev/null 2>&1 || die "not root and sudo is not installed"
    exec sudo -n -E bash "$0" "$@" || die "not root and 'sudo -n' failed"
fi
export DEBIAN_FRONTEND=noninteractive

# One run at a time (e.g. parallel make); bounded wait for the lock.
{ exec 9>/run/slurm_local.lock; } 2>/dev/null || exec 9>/tmp/slurm_local.lock
if command -v flock >/dev/null 2>&1; then
    flock -w 300 9 || die "another slurm_local.sh run holds the lock for over 300 s"
fi

# ---------------------------------------------------------------- packages
have_all() {
    local c
    for c in sbatch squeue scancel sinfo sacct scontrol slurmctld slurmd munged munge unmunge; do
        command -v "$c" >/dev/null 2>&1 || PATH=$PATH:/usr/sbin:/sbin command -v "$c" >/dev/null 2>&1 || return 1
    done
}
export PATH=$PATH:/usr/sbin:/sbin
if ! have_all; then
    command -v apt-get >/dev/null 2>&1 || die "SLURM is missing and apt-get is not available"
    say "installing slurmctld slurmd slurm-client munge (apt-get)"
    # Keep the packages' init scripts from starting daemons during install
    # (no systemd here; we start them ourselves below).
    POLICY=/usr/sbin/policy-rc.d; OWN_POLICY=""
    if [ ! -e "$POLICY" ]; then
        printf '#!/bin/sh\nexit 101\n' >"$POLICY" && chmod 755 "$POLICY" && OWN_POLICY=1
        trap '[ -n "$OWN_POLICY" ] && rm -f "$POLICY"' EXIT
    fi
    timeout 600 apt-get update -qq </dev/null >/tmp/slurm_local_apt.log 2>&1 \
        || die "apt-get update failed (see /tmp/slurm_local_apt.log)"
    timeout 900 apt-get install -y -qq --no-install-recommends \
        slurmctld slurmd slurm-client munge </dev/null >>/tmp/slurm_local_apt.log 2>&1 \
        || die "apt-get install slurmctld slurmd slurm-client munge failed (see /tmp/slurm_local_apt.log)"
    [ -n "$OWN_POLICY" ] && rm -f "$POLICY" && OWN_POLICY=""
    have_all || die "packages installed but some of sbatch/slurmctld/slurmd/munged are still missing"
fi

# ---------------------------------------------------------------- munge
munge_ok() { timeout 5 munge -n 2>/dev/null | timeout 5 unmunge >/dev/null 2>&1; }
if ! munge_ok; then
    id munge >/dev/null 2>&1 || die "user 'munge' does not exist (munge package broken?)"
    install -d -o munge -g munge -m 0700 /etc/munge /var/log/munge
    install -d -o munge -g munge -m 0711 /var/lib/munge
    install -d -o munge -g munge -m 0755 /run/munge
    if [ ! -s "$MUNGE_KEY" ]; then
        say "creating $MUNGE_KEY"
        rm -f "$MUNGE_KEY"
        runuser -u munge -- mungekey --create --keyfile="$MUNGE_KEY" >/dev/null 2>&1 \
            || mungekey --create --keyfile="$MUNGE_KEY" >/dev/null 2>&1 \
            || dd if=/dev/urandom of="$MUNGE_KEY" bs=1024 count=1 status=none \
            || die "cannot create $MUNGE_KEY"
    fi
    chown munge:munge "$MUNGE_KEY" && chmod 0400 "$MUNGE_KEY"
    if ! ps -C munged -o stat= 2>/dev/null | grep -qv '^Z'; then
        say "starting munged"
        # --force: start even if a stale socket/lock from a dead munged remains.
        runuser -u munge -- munged --force >/tmp/slurm_local_munged.log 2>&1 9>&- \
            || munged --force >>/tmp/slurm_local_munged.log 2>&1 9>&- \
            || die "munged failed to start: $(tail -n 1 /tmp/slurm_local_munged.log)"
    fi
    for _ in $(seq 1 20); do munge_ok && break; sleep 0.5; done
    munge_ok || die "munged is not answering ('munge -n | unmunge' fails); see /var/log/munge/munged.log"
fi

# ---------------------------------------------------------------- slurm.conf
ncpu=$(nproc 2>/dev/null || echo 1)
mem_mb=$(awk '/^MemTotal:/ {print int($2/1024)}' /proc/meminfo 2>/dev/null)
[ -n "$mem_mb" ] && [ "$mem_mb" -gt 0 ] || mem_mb=1024
real_mem=$(( mem_mb * 95 / 100 ))   # a bit below the machine's memory
[ "$real_mem" -ge 1 ] || real_mem=1

want_conf() {
cat <<EOF
$MARK
# One-node SLURM cluster on localhost (no systemd, no cgroups, no accounting DB).
ClusterName=outcouple
SlurmctldHost=localhost
SlurmUser=root
SlurmdUser=root
AuthType=auth/munge
CredType=cred/munge
MpiDefault=none
ProctrackType=proctrack/linuxproc
TaskPlugin=task/none
JobAcctGatherType=jobacct_gather/none
AccountingStorageType=accounting_storage/none
# A text record of every finished job, read by 'sacct' (no slurmdbd needed).
JobCompType=jobcomp/filetxt
JobCompLoc=$LOG_DIR/jobcomp.log
SelectType=select/cons_tres
SelectTypeParameters=CR_Core
SchedulerType=sched/backfill
# Start tasks as soon as CPUs free up (the default batches scheduling in 3 s ticks).
SchedulerParameters=batch_sched_delay=0
ReturnToService=2
# Finished jobs stay visible to squeue/scontrol for an hour.
MinJobAge=3600
MaxArraySize=10001
MailProg=/bin/true
StateSaveLocation=$CTLD_SPOOL
SlurmdSpoolDir=$SLURMD_SPOOL
SlurmctldPidFile=/run/slurmctld.pid
SlurmdPidFile=/run/slurmd.pid
SlurmctldLogFile=$LOG_DIR/slurmctld.log
SlurmdLogFile=$LOG_DIR/slurmd.log
SlurmctldDebug=info
SlurmdDebug=info
SlurmctldTimeout=30
SlurmdTimeout=60
InactiveLimit=0
KillWait=5
Waittime=0
# Use the CPUs/memory below even if slurmd sees the hardware differently.
SlurmdParameters=config_overrides
NodeName=$NODE NodeAddr=127.0.0.1 NodeHostname=$NODE CPUs=$ncpu RealMemory=$real_mem State=UNKNOWN
PartitionName=local Nodes=$NODE Default=YES MaxTime=INFINITE State=UP OverSubscribe=NO
EOF
}

conf_changed=""
install -d -m 0755 "$CONF_DIR" "$LOG_DIR" "$CTLD_SPOOL" "$SLURMD_SPOOL" \
    || die "cannot create $CONF_DIR, $LOG_DIR or the spool dirs"
if ! want_conf | cmp -s - "$CONF"; then
    if [ -e "$CONF" ] && ! grep -qxF "$MARK" "$CONF"; then
        bak="$CONF.bak.$(date +%Y%m%d%H%M%S)"
        cp -p "$CONF" "$bak" && say "kept the existing $CONF as $bak"
    fi
    want_conf >"$CONF.tmp.$$" && chmod 0644 "$CONF.tmp.$$" && mv -f "$CONF.tmp.$$" "$CONF" \
        || die "cannot write $CONF"
    say "wrote $CONF (CPUs=$ncpu RealMemory=$real_mem)"
    conf_changed=1
fi
# Our own cgroup.conf from an earlier version of this script is dropped: the
# packaged default (autodetect) works with task/none + proctrack/linuxproc.
CG="$CONF_DIR/cgroup.conf"
if [ -e "$CG" ] && grep -qxF "$MARK" "$CG" && grep -q '^CgroupPlugin=disabled' "$CG"; then
    rm -f "$CG"; conf_changed=1
fi

# ---------------------------------------------------------------- daemons
running() {  # NAME: a live (not zombie) process with exactly this name exists
    ps -C "$1" -o stat= 2>/dev/null | grep -qv '^Z'
}
stop_daemon() {  # NAME PIDFILE: stop a running daemon (bounded)
    local pid
    pid=$(cat "$2" 2>/dev/null)
    [ -n "$pid" ] && kill -0 "$pid" 2>/dev/null || pid=$(ps -C "$1" -o pid=,stat= | awk '$2 !~ /^Z/ {print $1; exit}')
    [ -n "$pid" ] || return 0
    kill "$pid" 2>/dev/null
    for _ in $(seq 1 20); do kill -0 "$pid" 2>/dev/null || return 0; sleep 0.5; done
    kill -9 "$pid" 2>/dev/null; sleep 0.5
}
if [ -n "$conf_changed" ]; then
    # New config: restart what runs with the old one.
    running slurmd && { say "restarting slurmd (config changed)"; stop_daemon slurmd /run/slurmd.pid; }
    running slurmctld && { say "restarting slurmctld (config changed)"; stop_daemon slurmctld /run/slurmctld.pid; }
fi

last_err() {  # last error line of a log, for the failure message
    grep -iE 'error|fatal' "$1" 2>/dev/null | tail -n 1 | cut -c1-200
}
# Daemons are started with fd 9 (the lock) closed, or they would hold it.
if ! running slurmctld; then
    say "starting slurmctld"
    slurmctld >/tmp/slurm_local_slurmctld.out 2>&1 9>&- \
        || die "slurmctld failed: $(tail -n 1 /tmp/slurm_local_slurmctld.out) $(last_err $LOG_DIR/slurmctld.log)"
fi
ok=""
for _ in $(seq 1 $((WAIT_S * 2))); do
    timeout 5 scontrol ping 2>/dev/null | grep -q 'is UP' && { ok=1; break; }
    running slurmctld || break
    sleep 0.5
done
[ -n "$ok" ] || die "slurmctld is not answering ($(last_err $LOG_DIR/slurmctld.log))"

start_slurmd() { slurmd -N "$NODE" >/tmp/slurm_local_slurmd.out 2>&1 9>&-; }
if ! running slurmd; then
    say "starting slurmd"
    if ! start_slurmd; then
        # slurmd 22.05 always loads a cgroup plugin; on a host whose cgroups it
        # cannot set up without systemd, retry once with IgnoreSystemd.
        if [ ! -e "$CG" ] && tail -n 5 "$LOG_DIR/slurmd.log" 2>/dev/null | grep -qi cgroup; then
            printf '%s\nCgroupPlugin=autodetect\nIgnoreSystemd=yes\n' "$MARK" >"$CG"
            say "slurmd failed on cgroups; retrying with $CG (IgnoreSystemd=yes)"
            start_slurmd || die "slurmd failed: $(last_err $LOG_DIR/slurmd.log)"
        else
            die "slurmd failed: $(tail -n 1 /tmp/slurm_local_slurmd.out) $(last_err $LOG_DIR/slurmd.log)"
        fi
    fi
fi

# ---------------------------------------------------------------- node up
state=""; resumed=0
deadline=$(( $(date +%s) + WAIT_S ))
while :; do
    state=$(timeout 5 sinfo -h -n "$NODE" -o %T 2>/dev/null | head -n 1)
    case "$state" in
        idle|mixed|allocated|completing) break ;;
        *down*|*drain*|*fail*)
            if [ "$resumed" -lt 5 ]; then
                timeout 5 scontrol update nodename="$NODE" state=resume >/dev/null 2>&1
                resumed=$((resumed + 1))
            fi ;;
    esac
    running slurmd || die "slurmd exited ($(last_err $LOG_DIR/slurmd.log))"
    [ "$(date +%s)" -lt "$deadline" ] || die "node $NODE is '${state:-unknown}' after ${WAIT_S}s ($(timeout 5 sinfo -h -R -o %E 2>/dev/null | head -n 1))"
    sleep 0.5
done
say "SLURM is up: node $NODE $state, CPUs=$ncpu, partition 'local'"
exit 0
