"""What a sweep folder keeps of its SLURM submissions, and what SLURM's queue says of them.

One submission is a job array over the sweep jobs that were missing or failed
when it was made; its list lives in ``DIR/slurm/batch-N.json`` (with the
SLURM job id once sbatch accepted it), its script in ``batch-N.sh``, and
array task i runs its share of the list (``python -m outcouple.sweep_task``).
"""

import json
import shutil
import subprocess
from pathlib import Path

SLURM = "slurm"


def slurm_dir(out_dir):
    return Path(out_dir) / SLURM


def batches(out_dir):
    folder = slurm_dir(out_dir)
    return sorted(folder.glob("batch-*.json")) if folder.is_dir() else []


def batch_script(out_dir, batch_file, count, cluster, python):
    """The sbatch script of one submission (array tasks 0 .. count-1; each runs ``jobs_per_task`` jobs)."""
    out_dir = Path(out_dir).resolve()
    lines = ["#!/bin/bash", "#SBATCH --job-name=outcouple-sweep", f"#SBATCH --array=0-{count - 1}",
             f"#SBATCH --output={out_dir / SLURM}/%A_%a.log"]
    for option, value in (("partition", cluster.get("partition")), ("time", cluster.get("time")),
                          ("mem", cluster.get("mem")), ("cpus-per-task", cluster.get("cpus"))):
        if value is not None:
            lines.append(f"#SBATCH --{option}={value}")
    ranks = int(cluster.get("mpi_ranks") or 1)
    if ranks > 1 and cluster.get("cpus") is None:
        lines.append(f"#SBATCH --cpus-per-task={ranks}")
    lines += [f"#SBATCH {line}" for line in cluster.get("extra", [])]
    launch = cluster.get("mpi_launch", "mpirun -np {ranks}").format(ranks=ranks) + " " if ranks > 1 else ""
    lines.append(f'exec {launch}"{python}" -m outcouple.sweep_task "{out_dir}" "{Path(batch_file).resolve()}" '
                 '"$SLURM_ARRAY_TASK_ID"')
    return "\n".join(lines) + "\n"


def partition_cpus(partition=None):
    """CPUs of a partition (the default one when None) that are allocated or idle, from ``sinfo``; None
    when SLURM does not say."""
    if shutil.which("sinfo") is None:
        return None
    try:
        done = subprocess.run(["sinfo", "-h", "-o", "%P %C"], capture_output=True, text=True, timeout=30)
    except (OSError, subprocess.SubprocessError):
        return None
    for line in done.stdout.splitlines():
        name, _, cpus = line.strip().partition(" ")
        if (partition is None and name.endswith("*")) or name.rstrip("*") == partition:
            try:
                allocated, idle, _, _ = (int(n) for n in cpus.split("/"))
            except ValueError:
                return None
            return allocated + idle
    return None


def jobs_per_task(count, cluster):
    """Jobs per array task for ``count`` jobs: the cluster's ``jobs_per_task`` when given, else one task per
    CPU slot of the partition (CPUs / CPUs per task) when there are more jobs than slots, else 1.

    Each task pays SLURM's start (the scheduler places tasks on a one-second tick) and a Python and
    Meep start (about a second); packing pays them once per slot. The tasks still fill the partition.
    """
    if cluster.get("jobs_per_task"):
        return int(cluster["jobs_per_task"])
    cpus = partition_cpus(cluster.get("partition"))
    per_slot = int(cluster.get("cpus") or cluster.get("mpi_ranks") or 1)
    slots = (cpus or 0) // per_slot
    return max(1, -(-count // slots)) if slots else 1


def _queue():
    """{(slurm job id, array task) or (job id, None): state} from squeue; {} without SLURM."""
    if shutil.which("squeue") is None:
        return {}
    done = subprocess.run(["squeue", "-h", "-r", "-o", "%i %T"], capture_output=True, text=True, timeout=30)
    states = {}
    for line in done.stdout.splitlines():
        ident, _, state = line.partition(" ")
        job, _, task = ident.partition("_")
        states[(job, task)] = state
    return states


def queued_ids(out_dir):
    """Sweep job ids whose array task is pending or running."""
    queue = _queue()
    ids = {}
    for batch in batches(out_dir):
        info = json.loads(batch.read_text())
        per_task = info.get("per_task", 1)
        for i, job_id_ in enumerate(info["jobs"]):
            state = queue.get((info.get("slurm_job"), str(i // per_task)))
            if state in ("PENDING", "RUNNING", "CONFIGURING", "COMPLETING"):
                ids[job_id_] = state
    return ids


def slurm_log_reason(out_dir, job_id_):
    """The last line of the newest SLURM log of a job (why a task died without a .failed file)."""
    reason = ""
    for batch in batches(out_dir):
        info = json.loads(batch.read_text())
        if job_id_ in info["jobs"] and info.get("slurm_job"):
            task = info["jobs"].index(job_id_) // info.get("per_task", 1)
            log = slurm_dir(out_dir) / f"{info['slurm_job']}_{task}.log"
            if log.is_file():
                lines = [line for line in log.read_text(errors="replace").splitlines() if line.strip()]
                reason = lines[-1] if lines else "no output"
    return reason


