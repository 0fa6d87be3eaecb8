"""Parameter sweeps: the ``[sweep]`` table, the jobs and their ids, running, status.

A sweep folder holds ``plan.json`` (the axes, every point's validated case
as TOML, and its jobs) and ``jobs/ID.h5``, one complete result file per job
(written under a temporary name and renamed), or ``jobs/ID.failed`` with the
reason when a job failed. A job's id is a hash of its point's resolved case,
its orientation and position (for a point source also its wavelength and
kz node: each node is a job of its own), and the result-format version: a changed case
never reuses a stale result, an unchanged one is never recomputed, so
running the sweep again only runs what is missing or failed.
"""

import hashlib
import itertools
import json
import shutil
import subprocess
import sys
import time
import tomllib
import traceback
from pathlib import Path

import numpy as np
import tomli_w

from fdtd_cases.case import Collection
from fdtd_cases.case_file import parse_case, resolved_dict
from fdtd_cases.errors import CaseError
from fdtd_cases.layout import make_layout
from fdtd_cases.runner import run_many
from postprocess.files import atomic_write
from postprocess.results import FORMAT_VERSION, read_results, write_results
from postprocess.sweep_file import read_sweep, write_sweep

from . import slurm
from .comparison import with_value
from .jobs import jobs_of
from .summary import flat_baseline, summarise
from .version import __version__

MODES = ("grid", "zip")
PLAN = "plan.json"


RANGE_KEYS = {"start", "stop", "count"}


def _dotted(table, prefix=""):
    """The [sweep] table with nested tables flattened to dotted keys.

    TOML reads ``surface.period = [...]`` (unquoted) as a table ``surface`` holding ``period``;
    ``"surface.period" = [...]`` (quoted) is one key. Both mean the same axis. A table holding any
    of start, stop and count is a range, not a level of nesting.
    """
    flat = {}
    for name, spec in table.items():
        if isinstance(spec, dict) and not RANGE_KEYS & set(spec):
            flat.update(_dotted(spec, f"{prefix}{name}."))
        else:
            flat[f"{prefix}{name}"] = spec
    return flat


def parse_sweep(data, source):
    """The ``[sweep]`` table of a case dict: (axes [(key, values), ...], mode).

    Each key is a dotted case key the file already gives, with a list of
    numbers or a ``{ start, stop, count }`` table; ``mode`` is "grid" (every
    combination) or "zip" (the i-th value of every axis together).
    """
    table = data.get("sweep")
    if not isinstance(table, dict) or not table:
        raise CaseError(source, "sweep", "is missing: a sweep needs a [sweep] table of dotted keys and values")
    table = _dotted(table)
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


def job_id(resolved_toml, orientation, x, wavelength=None, kz=None, resolution=None):
    """Hash of a job's inputs and the result-format version (a point source's node adds its wavelength and kz,
    a job on a two-grid run's second grid its resolution)."""
    text = f"format {FORMAT_VERSION}\n{resolved_toml}\norientation {orientation}\nx {x!r}\n"
    if kz is not None:
        text += f"wavelength {wavelength!r}\nkz {kz!r}\n"
    if resolution is not None:
        text += f"resolution {resolution!r}\n"
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
            point = with_value(point, key, value, source, label=f"sweep.{key}" if "." not in key else
                               f'sweep."{key}"', who="a sweep varies")
        where = f"{source} (at {_label(values)})"
        case = parse_case(point, source=where)
        layout = make_layout(case, source=where)
        resolved = tomli_w.dumps(resolved_dict(case))
        jobs = [{**job, "id": job_id(resolved, job["orientation"], job["x"], job.get("wavelength"), job.get("kz"),
                                     job.get("resolution"))}
                for job in jobs_of(case, layout)]
        points.append({"values": values, "case_toml": resolved, "jobs": jobs})
    collection = parse_case(data, source=source).collection
    return {"case_file": str(source), "mode": mode,
            "collection": collection.model_dump(exclude_none=True) if collection else None, "axes": [{"key": k, "values": v.tolist()} for k, v in axes],
            "points": points}


def write_plan(out_dir, the_plan):
    out_dir = Path(out_dir)
    (out_dir / "jobs").mkdir(parents=True, exist_ok=True)
    with atomic_write(out_dir / PLAN) as partial:
        partial.write_text(json.dumps(the_plan, indent=1))


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
    reason = slurm.slurm_log_reason(out_dir, job["id"])
    if reason:
        return "failed", reason
    return "missing", ""


def status(out_dir):
    """Counts and the failed jobs with their reasons."""
    the_plan = read_plan(out_dir)
    queued = slurm.queued_ids(out_dir) if slurm.batches(out_dir) else {}
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
    summary = summarise(case, [{**job, **raw}], layout.wavelengths, layout.resolution)
    path = Path(out_dir) / "jobs" / f"{job['id']}.h5"
    write_results(path, case_file=f"sweep point: {_label(point['values'])}", case_text=point["case_toml"],
                  resolved_toml=point["case_toml"], layout=layout, jobs=[job], raw=[raw], summary=summary,
                  versions={"package_version": __version__, "meep_version": raw["meep_version"]})
    failed = path.with_suffix(".failed")
    if failed.exists():
        failed.unlink()


def run_local(out_dir, workers=None, progress=True):
    """Run every job that is missing or failed, in local worker processes; returns how many ran."""
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


def submit_slurm(out_dir, cluster, python):
    """Submit the jobs that are missing or failed (and not queued) as one array; returns (job id, tasks,
    jobs per task)."""
    if shutil.which("sbatch") is None:
        raise CaseError("command line", "--engine", "slurm: sbatch is not on the PATH (is SLURM installed, and is "
                        "this a login node?)")
    the_plan = read_plan(out_dir)
    queued = slurm.queued_ids(out_dir)
    todo = [job["id"] for point in the_plan["points"] for job in point["jobs"]
            if job_state(out_dir, job)[0] != "done" and job["id"] not in queued]
    if not todo:
        return None, 0, 0
    folder = slurm.slurm_dir(out_dir)
    folder.mkdir(parents=True, exist_ok=True)
    number = len(slurm.batches(out_dir))
    batch = folder / f"batch-{number:03d}.json"
    script = folder / f"batch-{number:03d}.sh"
    per_task = slurm.jobs_per_task(len(todo), cluster)
    tasks = -(-len(todo) // per_task)
    script.write_text(slurm.batch_script(out_dir, batch, tasks, cluster, python))
    batch.write_text(json.dumps({"jobs": todo, "per_task": per_task}))
    done = subprocess.run(["sbatch", "--parsable", str(script)], capture_output=True, text=True, timeout=60)
    if done.returncode != 0:
        batch.unlink()
        raise CaseError("command line", "--engine", f"slurm: sbatch refused the array: {done.stderr.strip()}")
    job = done.stdout.strip().split(";")[0]
    batch.write_text(json.dumps({"jobs": todo, "per_task": per_task, "slurm_job": job}))
    return job, tasks, per_task


def point_summaries(out_dir, the_plan):
    """The summary of every point, from its job files (the same as ``show`` of a run of that point).

    Each carries ``flat_baseline``, the exact efficiency of the point's stack with a flat surface (of the
    line emitter or the point dipole the sweep runs).
    """
    jobs_dir = Path(out_dir) / "jobs"
    missing = [job["id"] for point in the_plan["points"] for job in point["jobs"]
               if not (jobs_dir / f"{job['id']}.h5").is_file()]
    if missing:
        raise CaseError(out_dir, "", f"{len(missing)} job(s) not done (for example {missing[0]}); "
                        "run 'outcouple sweep' again to finish them, 'outcouple status' to see why")
    summaries = []
    for point in the_plan["points"]:
        case = parse_case(tomllib.loads(point["case_toml"]), source=f"{out_dir}/{PLAN}")
        if the_plan.get("collection"):
            case = case.model_copy(update={"collection": Collection(**the_plan["collection"])})
        jobs, grid = [], None
        for job in point["jobs"]:
            data = read_results(jobs_dir / f"{job['id']}.h5")
            grid = data["grid"]
            jobs += data["jobs"]
        summary = summarise(case, jobs, grid["wavelengths"], grid["resolution"])
        summary["flat_baseline"] = flat_baseline(case, dim=3 if case.emitter.source == "point" else 2)
        summaries.append(summary)
    return summaries


def collect(out_dir, the_plan=None):
    """Analyse every point and write ``sweep.h5`` and ``sweep.csv`` (refused while jobs are missing).

    Returns the point summaries and the collected data set (:func:`postprocess.sweep_file.read_sweep`).
    """
    the_plan = the_plan or read_plan(out_dir)
    summaries = point_summaries(out_dir, the_plan)
    h5_path, _ = write_sweep(out_dir, the_plan, summaries, __version__)
    return summaries, read_sweep(h5_path)


def start(case_file, out, engine="local", workers=None, progress=True, cluster=None, wait=None):
    """Validate a case's ``[sweep]``, write its plan into ``out`` and run or submit what is not done.

    Returns a dict: ``points``, ``jobs``, ``done_before`` and, for the local
    engine, ``ran``, ``done``, ``failed`` (list of (values, job, reason));
    for SLURM, ``slurm_job`` (None when nothing needed submitting), ``tasks``
    and ``jobs_per_task``, and with ``wait`` (seconds) the ``counts`` after
    waiting that long at most for the array. ``cluster`` overrides the
    case's ``[cluster]`` keys.
    """
    from fdtd_cases.case_file import load_case

    case, text = load_case(case_file)
    the_plan = plan(tomllib.loads(text), case_file)
    out = Path(out)
    if (out / PLAN).is_file() and read_plan(out)["points"] != the_plan["points"]:
        raise CaseError("command line", "--out", f"{out} holds a different sweep; use a new folder "
                        "(job results are kept by id, so nothing valid would be lost, but the folder's "
                        "plan would no longer describe them)")
    write_plan(out, the_plan)
    total = sum(len(p["jobs"]) for p in the_plan["points"])
    before = status(out)[1]["done"]
    info = {"points": len(the_plan["points"]), "jobs": total, "done_before": before}
    if engine == "slurm":
        settings = case.cluster.model_dump()
        settings.update({k: v for k, v in (cluster or {}).items() if v is not None and k != "extra"})
        settings["extra"] = settings["extra"] + list((cluster or {}).get("extra") or [])
        job, tasks, per_task = submit_slurm(out, settings, sys.executable)
        info.update({"slurm_job": job, "tasks": tasks, "jobs_per_task": per_task})
        if wait:
            info["counts"] = wait_for(out, wait)
        return info
    if progress:
        print(f"sweep of {info['points']} point(s), {total} job(s): {before} already done, "
              f"running {total - before}", file=sys.stderr)
    ran = run_local(out, workers=workers, progress=progress)
    _, counts, failed = status(out)
    return {**info, "ran": ran, "done": counts["done"], "failed": failed}


def wait_for(out, seconds):
    """Wait up to ``seconds`` while SLURM tasks of the sweep are queued or running; the final counts."""
    deadline = time.monotonic() + seconds
    while status(out)[1]["running"] and time.monotonic() < deadline:
        time.sleep(1)
    return status(out)[1]


def report_status(out):
    """``outcouple status``: counts of done, running, failed and missing jobs, and the failed ones."""
    _, counts, failed = status(out)
    return {**counts, "jobs": sum(counts.values()), "failed_jobs": failed}
