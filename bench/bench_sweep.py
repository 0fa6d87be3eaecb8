"""Benchmark sweeps: local scaling (8 jobs on 2 workers against 1) and the SLURM engine's overhead.

Case: a flat chip (index 2.0, 32 points per wavelength), out-of-plane emitter,
a sweep of 8 emitter depths: 8 FDTD jobs of a few seconds each.

1. ``outcouple sweep --engine local`` with 1 worker, then with 2 (fresh
   folders): the ratio of wall times (goal: at least 1.8 on 2 cores).
2. With SLURM reachable (``sbatch`` on the PATH): the same 8 jobs as one job
   array, with the default packing (one task per CPU of the partition: 2 tasks of 4 jobs on the
   one-node cluster of ``make test``) and with one job per task; overhead per job = (elapsed x cores -
   sum of the jobs' own run times) / jobs, elapsed from the command's start to its report
   (``--wait``). Goal: under 1 s with the default settings.

Run with ``make bench`` or ``.venv/bin/python bench/bench_sweep.py``.
"""

import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import h5py

CASE = """
[light]
wavelength = 1.0
[chip]
index = 2.0
[emitter]
depth = 0.5
orientation = "out-of-plane"
[grid]
points_per_wavelength = 32
[sweep]
"emitter.depth" = [0.40, 0.45, 0.50, 0.55, 0.60, 0.65, 0.70, 0.75]
"""


def sweep(case, out, *extra):
    start = time.perf_counter()
    done = subprocess.run([sys.executable, "-m", "outcouple.cli", "sweep", str(case), "--out", str(out), "--quiet",
                           *extra], capture_output=True, text=True)
    if done.returncode:
        sys.exit(f"sweep failed: {done.stderr}")
    return time.perf_counter() - start


def own_times(out):
    return [float(h5py.File(p)["jobs/000"].attrs["wall_time"]) for p in sorted((Path(out) / "jobs").glob("*.h5"))]


def main():
    work = Path(tempfile.mkdtemp(prefix="bench_sweep_"))
    case = work / "case.toml"
    case.write_text(CASE)
    one = sweep(case, work / "one", "--workers", "1")
    two = sweep(case, work / "two", "--workers", "2")
    print("sweep of 8 FDTD jobs, local engine")
    print(f"  1 worker {one:.1f} s, 2 workers {two:.1f} s: speed-up {one / two:.2f} (goal >= 1.8)")
    if shutil.which("sbatch"):
        cores = os.cpu_count() or 1
        for label, extra in (("default packing", []), ("1 job per task", ["--jobs-per-task", "1"])):
            folder = work / f"slurm{len(extra)}"
            elapsed = sweep(case, folder, "--engine", "slurm", "--wait", "600", "--time", "00:10:00", "--mem", "2G",
                            *extra)
            times = own_times(folder)
            if len(times) == 8:
                overhead = (elapsed * cores - sum(times)) / len(times)
                print(f"  SLURM array, {label}: {elapsed:.1f} s for 8 jobs on {cores} cores, "
                      f"jobs' own run time {sum(times):.1f} s: overhead {overhead:.2f} s per job "
                      f"(goal < 1 s with the default)")
            else:
                print(f"  SLURM array: only {len(times)} of 8 jobs finished in {elapsed:.0f} s")
    else:
        print("  SLURM: sbatch not found, overhead not measured (make test starts a one-node cluster)")
    shutil.rmtree(work, ignore_errors=True)


if __name__ == "__main__":
    main()
