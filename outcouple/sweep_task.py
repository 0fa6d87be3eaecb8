"""One SLURM array task: ``python -m outcouple.sweep_task DIR BATCH INDEX``.

Runs its share of a submission's jobs (see :mod:`outcouple.slurm`), writing
each job's result file the way a local sweep does.
"""

import json
import sys
import tomllib
import traceback
import warnings
from pathlib import Path

from fdtd_cases.case_file import parse_case
from fdtd_cases.layout import make_layout

from .slurm import slurm_dir
from .sweeps import PLAN, read_plan, write_job


def run_task(out_dir, batch_file, index):
    """One array task: run its share of ``batch_file``'s jobs, writing each job's file.

    A job that fails leaves its .failed file and the task goes on with the
    next; the task exits non-zero if any failed.
    """
    from fdtd_cases.meep_job import is_master
    from fdtd_cases.runner import run_planned

    # Under MPI every rank runs the simulation; only the master writes files (Meep's rule).
    master = is_master()
    info = json.loads(Path(batch_file).read_text())
    per_task = info.get("per_task", 1)
    mine = info["jobs"][index * per_task:(index + 1) * per_task]
    where = {job["id"]: (point, job) for point in read_plan(out_dir)["points"] for job in point["jobs"]}
    failures = 0
    for job_id_ in mine:
        if job_id_ not in where:
            raise SystemExit(f"sweep_task: job {job_id_} is not in {out_dir}/{PLAN}")
        point, job = where[job_id_]
        if master:
            with open(slurm_dir(out_dir) / "runs.log", "a") as log:
                log.write(f"{job_id_} started\n")
        try:
            case = parse_case(tomllib.loads(point["case_toml"]), source=f"{out_dir}/{PLAN}")
            layout = make_layout(case)
            raw = run_planned(case, layout, job)
            if master:
                write_job(out_dir, case, layout, job, raw, point)
        except Exception as error:
            text = "".join(traceback.format_exception(error))
            if master:
                (Path(out_dir) / "jobs" / f"{job_id_}.failed").write_text(text)
            print(text, flush=True)
            failures += 1
    if failures:
        raise SystemExit(f"sweep_task: {failures} of {len(mine)} job(s) failed")


if __name__ == "__main__":
    # Debian's numpy 1.24 warns about subnormals when Meep's module loads; not ours to fix.
    warnings.filterwarnings("ignore", message="The value of the smallest subnormal")
    run_task(sys.argv[1], sys.argv[2], int(sys.argv[3]))
