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

from .case import parse_case, resolved_dict
from .compare import with_value
from .errors import CaseError
from .layout import make_layout
from .runner import plan_jobs

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
    base = {k: v for k, v in data.items() if k != "sweep"}
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
    return {"case_file": str(source), "mode": mode, "axes": [{"key": k, "values": v.tolist()} for k, v in axes],
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


def job_state(out_dir, job):
    """("done" | "failed" | "missing", reason)."""
    jobs = Path(out_dir) / "jobs"
    if (jobs / f"{job['id']}.h5").is_file():
        return "done", ""
    failed = jobs / f"{job['id']}.failed"
    if failed.is_file():
        lines = [line for line in failed.read_text().splitlines() if line.strip()]
        return "failed", lines[-1] if lines else "failed"
    return "missing", ""


def status(out_dir):
    """Counts and the failed jobs with their reasons."""
    the_plan = read_plan(out_dir)
    counts = {"done": 0, "failed": 0, "missing": 0}
    failed = []
    for point in the_plan["points"]:
        for job in point["jobs"]:
            state, reason = job_state(out_dir, job)
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
    from .runner import run_many

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
