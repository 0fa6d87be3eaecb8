"""Parameter sweeps: the ``[sweep]`` table, the jobs and their ids, running, status.

A sweep folder holds ``plan.json`` (the axes, every point's validated case
as TOML, and its jobs) and ``jobs/ID.h5``, one complete result file per job
(written under a temporary name and renamed), or ``jobs/ID.failed`` with the
reason when a job failed. A job's id is a hash of its point's resolved case,
its orientation and position, and the result-format version: a changed case
never reuses a stale result, an unchanged one is never recomputed, so
running the sweep again only runs what is missing or failed.
"""

import hashlib
import itertools
import json
import os
import traceback
from pathlib import Path

import numpy as np
import tomli_w

from fdtd_cases.case import parse_case, resolved_dict
from .compare import with_value
from fdtd_cases.errors import CaseError
from fdtd_cases.layout import make_layout
from fdtd_cases.runner import plan_jobs

MODES = ("grid", "zip")
PLAN = "plan.json"


def parse_sweep(data, source):
    """The ``[sweep]`` table of a case dict: (axes [(key, values), ...], mode).

    Each key is a dotted case key the file already gives, with a list of
    numbers or a ``{ start, stop, count }`` table; ``mode`` is "grid" (every
    combination) or "zip" (the i-th value of every axis together).
    """
    table = data.get("sweep")
    if not isinstance(table, dict) or not table:
        raise CaseError(source, "sweep", "is missing: a sweep needs a [sweep] table of dotted keys and values")
    table = dict(table)
    mode = table.pop("mode", "grid")
    if mode not in MODES:
        raise CaseError(source, "sweep.mode", f'must be "grid" or "zip", not {mode!r}')
    axes = []
    for key, spec in table.items():
        where = f"sweep.{key}" if "." not in key else f'sweep."{key}"'
        if isinstance(spec, dict):
            if set(spec) != {"start", "stop", "count"}:
                raise CaseError(source, where, "a range table needs exactly start, stop and count")
            count = spec["count"]
            if not isinstance(count, int) or isinstance(count, bool) or count < 1:
                raise CaseError(source, where, f"count must be a whole number of at least 1, not {count!r}")
            values = np.linspace(float(spec["start"]), float(spec["stop"]), count)
        elif isinstance(spec, list):
            if not spec:
                raise CaseError(source, where, "is an empty list: give at least one value")
            if not all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in spec):
                raise CaseError(source, where, "values must be numbers")
            values = np.array(spec, dtype=float)
        else:
            raise CaseError(source, where, "must be a list of numbers or a { start, stop, count } table")
        axes.append((key, values))
    if mode == "zip" and len({len(v) for _, v in axes}) > 1:
        sizes = ", ".join(f"{k}: {len(v)}" for k, v in axes)
        raise CaseError(source, "sweep.mode", f'"zip" needs axes of equal length ({sizes})')
    return axes, mode


def points_of(axes, mode):
    """Every sweep point as {key: value}, in order (grid: the last axis varies fastest)."""
    keys = [k for k, _ in axes]
    combos = zip(*[v for _, v in axes]) if mode == "zip" else itertools.product(*[v for _, v in axes])
    return [dict(zip(keys, map(float, combo))) for combo in combos]


def _label(values):
    return ", ".join(f"{k} = {v:g}" for k, v in values.items())


def job_id(resolved_toml, orientation, x):
    """Hash of a job's inputs and the result-format version."""
    from postprocess.results import FORMAT_VERSION

    text = f"format {FORMAT_VERSION}\n{resolved_toml}\norientation {orientation}\nx {x!r}\n"
    return hashlib.sha256(text.encode()).hexdigest()[:20]


def plan(data, source):
    """Validate every point (case and grid) before anything runs; the plan as plain data."""
    axes, mode = parse_sweep(data, source)
    # What says how to run (cluster), what to vary (sweep) or how to report (collection) is not
    # part of a job's inputs: changing it must not make finished jobs look new.
    base = {k: v for k, v in data.items() if k not in ("sweep", "cluster", "collection")}
    points = []
    for values in points_of(axes, mode):
        point = base
        for key, value in values.items():
            point = with_value(point, key, value, f"{source}: [sweep]")
        where = f"{source} (at {_label(values)})"
        case = parse_case(point, source=where)
        layout = make_layout(case, source=where)
        resolved = tomli_w.dumps(resolved_dict(case))
        jobs = [{**job, "id": job_id(resolved, job["orientation"], job["x"])} for job in plan_jobs(case, layout)]
        points.append({"values": values, "case_toml": resolved, "jobs": jobs})
    collection = parse_case(data, source=source).collection
    return {"case_file": str(source), "mode": mode,
            "collection": collection.model_dump(exclude_none=True) if collection else None, "axes": [{"key": k, "values": v.tolist()} for k, v in axes],
            "points": points}


def write_plan(out_dir, the_plan):
    out_dir = Path(out_dir)
    (out_dir / "jobs").mkdir(parents=True, exist_ok=True)
    partial = out_dir / (PLAN + ".partial")
    partial.write_text(json.dumps(the_plan, indent=1))
    os.replace(partial, out_dir / PLAN)


def read_plan(out_dir):
    path = Path(out_dir) / PLAN
    if not path.is_file():
        raise CaseError(out_dir, "", f"is not a sweep folder (no {PLAN}); start one with 'outcouple sweep'")
    return json.loads(path.read_text())


def job_state(out_dir, job, queued=None):
    """("done" | "running" | "failed" | "missing", reason).

    ``queued``: sweep job ids pending or running under SLURM (see status).
    A SLURM task that died without writing its .failed file (cancelled,
    out of time or memory, node lost) is failed with its log's last line.
    """
    jobs = Path(out_dir) / "jobs"
    if (jobs / f"{job['id']}.h5").is_file():
        return "done", ""
    if queued and job["id"] in queued:
        return "running", queued[job["id"]].lower()
    failed = jobs / f"{job['id']}.failed"
    if failed.is_file():
        lines = [line for line in failed.read_text().splitlines() if line.strip()]
        return "failed", lines[-1] if lines else "failed"
    reason = slurm_log_reason(out_dir, job["id"])
    if reason:
        return "failed", reason
    return "missing", ""


def status(out_dir):
    """Counts and the failed jobs with their reasons."""
    the_plan = read_plan(out_dir)
    queued = _queued_ids(out_dir) if _batches(out_dir) else {}
    counts = {"done": 0, "running": 0, "failed": 0, "missing": 0}
    failed = []
    for point in the_plan["points"]:
        for job in point["jobs"]:
            state, reason = job_state(out_dir, job, queued)
            counts[state] += 1
            if state == "failed":
                failed.append((point["values"], job, reason))
    return the_plan, counts, failed


def write_job(out_dir, case, layout, job, raw, point):
    """One job's complete result file, atomically (a job file is complete or absent)."""
    from postprocess.analysis import analyse
    from postprocess.results import write_results
    from . import __version__

    summary = analyse(case, [{**job, **raw}], layout.wavelengths, layout.resolution)
    path = Path(out_dir) / "jobs" / f"{job['id']}.h5"
    write_results(path, case_file=f"sweep point: {_label(point['values'])}", case_text=point["case_toml"],
                  resolved_toml=point["case_toml"], layout=layout, jobs=[job], raw=[raw], summary=summary,
                  versions={"package_version": __version__, "meep_version": raw["meep_version"]})
    failed = path.with_suffix(".failed")
    if failed.exists():
        failed.unlink()


def run_local(out_dir, workers=None, progress=True):
    """Run every job that is missing or failed, in local worker processes; returns how many ran."""
    import tomllib
    from fdtd_cases.runner import run_many

    the_plan = read_plan(out_dir)
    todo = []
    for point in the_plan["points"]:
        case = parse_case(tomllib.loads(point["case_toml"]), source=f"{out_dir}/{PLAN}")
        layout = make_layout(case)
        for job in point["jobs"]:
            if job_state(out_dir, job)[0] != "done":
                todo.append((case, layout, job, point))
    if not todo:
        return 0

    def finished(i, raw):
        case, layout, job, point = todo[i]
        write_job(out_dir, case, layout, job, raw, point)

    def failed(i, error):
        job = todo[i][2]
        text = "".join(traceback.format_exception(error))
        (Path(out_dir) / "jobs" / f"{job['id']}.failed").write_text(text + f"\n{type(error).__name__}: {error}\n")

    run_many([(c, lay, j) for c, lay, j, _ in todo], workers, progress, on_result=finished, on_error=failed)
    return len(todo)


# --- SLURM engine -------------------------------------------------------------------------------
# One submission is a job array over the jobs that were missing or failed when it was made; its
# list lives in slurm/batch-N.json, and array task i runs entry i (python -m outcouple.sweep_task).

SLURM = "slurm"


def _slurm_dir(out_dir):
    return Path(out_dir) / SLURM


def _batches(out_dir):
    folder = _slurm_dir(out_dir)
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


def submit_slurm(out_dir, cluster, python):
    """Submit the jobs that are missing or failed (and not queued) as one array; returns (job id, count)."""
    import shutil
    import subprocess

    if shutil.which("sbatch") is None:
        raise CaseError("command line", "--engine", "slurm: sbatch is not on the PATH (is SLURM installed, and is "
                        "this a login node?)")
    the_plan = read_plan(out_dir)
    queued = _queued_ids(out_dir)
    todo = [job["id"] for point in the_plan["points"] for job in point["jobs"]
            if job_state(out_dir, job)[0] != "done" and job["id"] not in queued]
    if not todo:
        return None, 0
    folder = _slurm_dir(out_dir)
    folder.mkdir(parents=True, exist_ok=True)
    number = len(_batches(out_dir))
    batch = folder / f"batch-{number:03d}.json"
    script = folder / f"batch-{number:03d}.sh"
    per_task = int(cluster.get("jobs_per_task") or 1)
    tasks = -(-len(todo) // per_task)
    script.write_text(batch_script(out_dir, batch, tasks, cluster, python))
    batch.write_text(json.dumps({"jobs": todo, "per_task": per_task}))
    done = subprocess.run(["sbatch", "--parsable", str(script)], capture_output=True, text=True, timeout=60)
    if done.returncode != 0:
        batch.unlink()
        raise CaseError("command line", "--engine", f"slurm: sbatch refused the array: {done.stderr.strip()}")
    job = done.stdout.strip().split(";")[0]
    batch.write_text(json.dumps({"jobs": todo, "per_task": per_task, "slurm_job": job}))
    return job, tasks


def _queue():
    """{(slurm job id, array task) or (job id, None): state} from squeue; {} without SLURM."""
    import shutil
    import subprocess

    if shutil.which("squeue") is None:
        return {}
    done = subprocess.run(["squeue", "-h", "-r", "-o", "%i %T"], capture_output=True, text=True, timeout=30)
    states = {}
    for line in done.stdout.splitlines():
        ident, _, state = line.partition(" ")
        job, _, task = ident.partition("_")
        states[(job, task)] = state
    return states


def _queued_ids(out_dir):
    """Sweep job ids whose array task is pending or running."""
    queue = _queue()
    ids = {}
    for batch in _batches(out_dir):
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
    for batch in _batches(out_dir):
        info = json.loads(batch.read_text())
        if job_id_ in info["jobs"] and info.get("slurm_job"):
            task = info["jobs"].index(job_id_) // info.get("per_task", 1)
            log = _slurm_dir(out_dir) / f"{info['slurm_job']}_{task}.log"
            if log.is_file():
                lines = [line for line in log.read_text(errors="replace").splitlines() if line.strip()]
                reason = lines[-1] if lines else "no output"
    return reason


def run_task(out_dir, batch_file, index):
    """One array task: run its share of ``batch_file``'s jobs, writing each job's file.

    A job that fails leaves its .failed file and the task goes on with the
    next; the task exits non-zero if any failed.
    """
    import tomllib
    from fdtd_cases.meep_job import is_master, run_job

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
            with open(_slurm_dir(out_dir) / "runs.log", "a") as log:
                log.write(f"{job_id_} started\n")
        try:
            case = parse_case(tomllib.loads(point["case_toml"]), source=f"{out_dir}/{PLAN}")
            layout = make_layout(case)
            raw = run_job(case, layout, job["orientation"], job["x"], job["symmetric"])
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
