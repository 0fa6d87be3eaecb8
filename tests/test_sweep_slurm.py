"""Sweeps through a real SLURM: the one-node cluster that `make test` starts (scripts/slurm_local.sh).

Submit a small sweep as a job array, kill one array task while it runs, resume, and check that
the collected data set equals a local run of the same sweep point by point, with no job
computed twice (each task notes its start in slurm/runs.log).
"""

import csv
import json
import os
import shutil
import subprocess
import sys
import time

import pytest

from conftest import assert_refused, case_toml, make_case, requires_meep, run_cli, service_missing, small_flat_case


def slurm_reason():
    """Why SLURM cannot be used here, or None."""
    if shutil.which("sbatch") is None:
        return "sbatch not found (make test starts SLURM with scripts/slurm_local.sh)"
    try:
        state = subprocess.run(["sinfo", "-h", "-o", "%T"], capture_output=True, text=True, timeout=20).stdout
    except (OSError, subprocess.TimeoutExpired) as exc:
        return f"sinfo failed: {exc}"
    if not any(s.strip() in ("idle", "mixed", "allocated") for s in state.split()):
        return f"no SLURM node is up (sinfo: {state.strip() or 'nothing'})"
    return None


@pytest.fixture(scope="module")
def slurm():
    """SLURM is up, or skip (fail on CI) saying why."""
    reason = slurm_reason()
    if reason is not None:
        service_missing(f"SLURM unavailable: {reason}")


needs_slurm = pytest.mark.usefixtures("slurm")

SWEEP = case_toml(small_flat_case(grid={"points_per_wavelength": 28},
                                  sweep={"emitter.depth": [0.4, 0.6], "chip.index": [2.0, 2.4]},
                                  cluster={"time": "00:10:00", "mem": "1G"}))


def task_state(job, task):
    out = subprocess.run(["squeue", "-h", "-t", "all", "-r", "-j", job, "-o", "%i %T"], capture_output=True,
                         text=True, timeout=20).stdout
    for line in out.splitlines():
        ident, _, state = line.partition(" ")
        if ident == f"{job}_{task}":
            return state.strip()
    return ""


def efficiencies(folder):
    with open(folder / "sweep.csv") as f:
        return [(row["emitter.depth"], row["chip.index"], float(row["efficiency"])) for row in csv.DictReader(f)]


@requires_meep
@pytest.mark.fdtd
@needs_slurm
def test_slurm_sweep_survives_a_killed_task(tmp_path):
    case = tmp_path / "sweep.toml"
    case.write_text(SWEEP)
    out = tmp_path / "cluster"
    # One job per task (the default would pack the 4 jobs into one task per CPU): task 1 is job 1.
    submitted = run_cli("sweep", case, "--out", out, "--engine", "slurm", "--jobs-per-task", "1", cwd=tmp_path)
    assert submitted.returncode == 0, submitted.stderr
    job = submitted.stdout.split("job array ")[1].split()[0]

    # Kill task 1 while it runs, as a lost node or a time limit would.
    deadline = time.monotonic() + 120
    while task_state(job, 1) in ("PENDING", "CONFIGURING", "") and time.monotonic() < deadline:
        time.sleep(0.1)
    assert task_state(job, 1) == "RUNNING", f"task 1 never ran: {task_state(job, 1)}"
    subprocess.run(["scancel", f"{job}_1"], check=True, timeout=20)

    deadline = time.monotonic() + 300
    while "running 0" not in run_cli("status", out).stdout and time.monotonic() < deadline:
        time.sleep(1)
    status = run_cli("status", out).stdout
    assert "done 3" in status and "failed 1" in status, status
    assert "CANCELLED" in status, status
    assert_refused(run_cli("collect", out), "not done", folder=out, pattern="sweep.h5")  # an unfinished sweep

    resumed = run_cli("sweep", case, "--out", out, "--engine", "slurm", "--wait", "300", cwd=tmp_path)
    assert resumed.returncode == 0, resumed.stdout + resumed.stderr
    assert "with 1 task(s)" in resumed.stdout and "done 4" in resumed.stdout, resumed.stdout
    starts = [w for w in (out / "slurm" / "runs.log").read_text().split() if w != "started"]
    killed = json.loads((out / "slurm" / "batch-000.json").read_text())["jobs"][1]
    assert json.loads((out / "slurm" / "batch-001.json").read_text())["jobs"] == [killed], "only the killed job again"
    counts = {i: starts.count(i) for i in set(starts)}
    assert len(counts) == 4, f"every job ran: {counts}"
    # The killed task may have died before or after noting its start; every other job ran once.
    assert all(n == 1 for i, n in counts.items() if i != killed) and counts[killed] in (1, 2), counts
    assert run_cli("collect", out).returncode == 0

    local = tmp_path / "local"
    assert run_cli("sweep", case, "--out", local, "--quiet", cwd=tmp_path).returncode == 0
    assert run_cli("collect", local).returncode == 0
    for (d1, n1, e1), (d2, n2, e2) in zip(efficiencies(out), efficiencies(local)):
        assert (d1, n1) == (d2, n2) and e1 == pytest.approx(e2, rel=1e-9), (d1, n1, e1, e2)


def test_unreachable_slurm_is_a_clear_error(tmp_path):
    """sbatch missing from the PATH: a message naming --engine, exit 2, nothing submitted."""
    case = tmp_path / "sweep.toml"
    case.write_text(SWEEP)
    env = dict(os.environ, PATH="/nonexistent")
    result = subprocess.run([sys.executable, "-m", "outcouple.cli", "sweep", str(case), "--out", str(tmp_path / "x"),
                             "--engine", "slurm"], capture_output=True, text=True, env=env, timeout=120)
    assert_refused(result, "--engine", "sbatch", folder=tmp_path / "x", pattern="jobs/*.h5")


@needs_slurm
def test_misconfigured_slurm_request_is_a_clear_error(tmp_path):
    """A partition that does not exist: sbatch's own reason, naming --engine, exit 2, no batch kept."""
    case = tmp_path / "sweep.toml"
    case.write_text(SWEEP)
    result = run_cli("sweep", case, "--out", tmp_path / "x", "--engine", "slurm", "--partition", "no_such_partition")
    assert_refused(result, "--engine", "sbatch refused", folder=tmp_path / "x" / "slurm", pattern="batch-*.json")


@requires_meep
@pytest.mark.fdtd
@needs_slurm
def test_slurm_tasks_can_run_batches_of_jobs(tmp_path):
    """--jobs-per-task 3: the 4 jobs go out as 2 array tasks, and every job file is written."""
    case = tmp_path / "sweep.toml"
    case.write_text(SWEEP)
    out = tmp_path / "batched"
    result = run_cli("sweep", case, "--out", out, "--engine", "slurm", "--jobs-per-task", "3", "--wait", "300",
                     cwd=tmp_path)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "with 2 task(s)" in result.stdout and "done 4" in result.stdout, result.stdout
    assert len(list((out / "jobs").glob("*.h5"))) == 4


@requires_meep
@pytest.mark.fdtd
@needs_slurm
def test_default_array_has_one_task_per_cpu(tmp_path):
    """No --jobs-per-task: the 4 jobs are packed into one task per CPU of the partition (sinfo's count,
    the cluster's own word), and every job file is written."""
    cpus = [line.split() for line in subprocess.run(["sinfo", "-h", "-o", "%P %C"], capture_output=True, text=True,
                                                     timeout=20).stdout.splitlines()]
    allocated, idle, _, _ = (int(n) for n in next(c for name, c in cpus if name.endswith("*")).split("/"))
    per_task = -(-4 // (allocated + idle))
    case = tmp_path / "sweep.toml"
    case.write_text(SWEEP)
    out = tmp_path / "packed"
    result = run_cli("sweep", case, "--out", out, "--engine", "slurm", "--wait", "300", cwd=tmp_path)
    assert result.returncode == 0, result.stdout + result.stderr
    assert f"with {-(-4 // per_task)} task(s) ({per_task} job(s) per task" in result.stdout, result.stdout
    assert "done 4" in result.stdout and len(list((out / "jobs").glob("*.h5"))) == 4, result.stdout


def test_jobs_per_task_rule(tmp_path, monkeypatch):
    """The packing rule against a stand-in sinfo (no SLURM needed): one task per CPU slot of the named or
    default partition when there are more jobs than slots; the cluster's own setting wins; 1 when
    sinfo says nothing."""
    from outcouple import slurm

    fake = tmp_path / "sinfo"
    fake.write_text("#!/bin/sh\necho 'small* 1/3/0/4'\necho 'big 10/90/4/104'\n")
    fake.chmod(0o755)
    monkeypatch.setenv("PATH", f"{tmp_path}{os.pathsep}{os.environ['PATH']}")
    assert slurm.partition_cpus() == 4 and slurm.partition_cpus("big") == 100
    assert slurm.jobs_per_task(10, {}) == 3  # 10 jobs on 4 CPUs: 4 tasks of at most 3
    assert slurm.jobs_per_task(4, {}) == 1 and slurm.jobs_per_task(3, {}) == 1
    assert slurm.jobs_per_task(10, {"cpus": 2}) == 5 and slurm.jobs_per_task(10, {"mpi_ranks": 4}) == 10
    assert slurm.jobs_per_task(250, {"partition": "big"}) == 3
    assert slurm.jobs_per_task(10, {"jobs_per_task": 1}) == 1
    assert slurm.jobs_per_task(10, {"partition": "none"}) == 1
    fake.write_text("#!/bin/sh\nexit 1\n")
    assert slurm.jobs_per_task(10, {}) == 1


@requires_meep
@pytest.mark.fdtd
@needs_slurm
def test_point_source_nodes_run_as_array_tasks(tmp_path):
    """A point source's kz nodes are jobs of the same SLURM array (several per task here), and the
    collected point equals a local sweep of the same case (the same nodes, the same files)."""
    text = case_toml(make_case(chip={"index": 1.6},
                               emitter={"depth": 0.4, "orientation": "out-of-plane", "source": "point"},
                               grid={"points_per_wavelength": 10, "width": 3.0, "pml": 1.0},
                               sweep={"emitter.depth": [0.4]}, cluster={"time": "00:10:00", "mem": "1G"}))
    case = tmp_path / "point.toml"
    case.write_text(text)
    assert run_cli("sweep", case, "--out", tmp_path / "local", "--quiet", cwd=tmp_path).returncode == 0
    jobs = len(json.loads((tmp_path / "local" / "plan.json").read_text())["points"][0]["jobs"])
    result = run_cli("sweep", case, "--out", tmp_path / "array", "--engine", "slurm", "--jobs-per-task", "6",
                     "--wait", "300", cwd=tmp_path)
    assert result.returncode == 0, result.stdout + result.stderr
    assert f"with {-(-jobs // 6)} task(s)" in result.stdout and f"done {jobs}" in result.stdout, result.stdout
    for folder in ("array", "local"):
        assert run_cli("collect", tmp_path / folder).returncode == 0
    rows = {}
    for folder in ("array", "local"):
        with open(tmp_path / folder / "sweep.csv") as f:
            rows[folder] = next(csv.DictReader(f))
    assert rows["array"] == rows["local"]


MPI_PREFIX = "/opt/meep-mpi"
MPI_ENV = (f"--export=ALL,PYTHONPATH={MPI_PREFIX}/usr/lib/python3/dist-packages,"
           f"LD_LIBRARY_PATH={MPI_PREFIX}/usr/lib/x86_64-linux-gnu")


@pytest.fixture(scope="module")
def mpi_meep():
    """The MPI build of Meep and mpirun, or skip (fail on CI) saying how to provide them."""
    if not (shutil.which("mpirun") and os.path.isdir(f"{MPI_PREFIX}/usr/lib/python3/dist-packages/meep")):
        service_missing("MPI Meep not provided (make test runs scripts/meep_mpi_local.sh)")


@requires_meep
@pytest.mark.fdtd
@pytest.mark.usefixtures("slurm", "mpi_meep")
def test_mpi_tasks_give_the_serial_answer(tmp_path):
    """mpi_ranks = 2: each array task runs its job on two MPI processes of the MPI build (the log
    says so), and the collected efficiency and budget equal a local serial sweep of the same case
    (Meep's parallel runs are deterministic: domain decomposition does not change the update)."""
    text = case_toml(small_flat_case(emitter={"orientation": "parallel"}, sweep={"emitter.depth": [0.5]},
                                     cluster={"time": "00:10:00", "mpi_ranks": 2,
                                              "mpi_launch": "mpirun --allow-run-as-root --oversubscribe -np {ranks}",
                                              "extra": [MPI_ENV]}))
    case = tmp_path / "mpi.toml"
    case.write_text(text)
    result = run_cli("sweep", case, "--out", tmp_path / "mpi", "--engine", "slurm", "--wait", "300", cwd=tmp_path)
    assert result.returncode == 0 and "done 1" in result.stdout, result.stdout + result.stderr
    logs = " ".join(p.read_text() for p in (tmp_path / "mpi" / "slurm").glob("*.log"))
    assert "2 processes" in logs, logs[-500:]
    assert run_cli("sweep", case, "--out", tmp_path / "serial", "--quiet", cwd=tmp_path).returncode == 0
    for folder in ("mpi", "serial"):
        assert run_cli("collect", tmp_path / folder).returncode == 0
    with open(tmp_path / "mpi" / "sweep.csv") as a, open(tmp_path / "serial" / "sweep.csv") as b:
        mpi, serial = next(csv.DictReader(a)), next(csv.DictReader(b))
    for key in ("efficiency", "top", "bottom", "sides"):
        assert float(mpi[key]) == pytest.approx(float(serial[key]), rel=1e-5, abs=1e-6), key
