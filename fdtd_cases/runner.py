"""Run the jobs of a case in worker processes, with a progress display.

One Meep simulation per (orientation, position) job; jobs run in separate
processes because serial Meep uses one core. Meep is imported only where a
job runs: inside the workers, whose standard output (where Meep prints) is
sent to /dev/null so that ``--json`` output stays clean, or, for a run of one
job, in this process with its standard output sent there for the job's time.
"""

import contextlib
import multiprocessing
import os
import sys
from concurrent.futures import ProcessPoolExecutor, as_completed

import numpy as np
from tqdm import tqdm

from . import kz, slab_modes


def plan_jobs(case, layout, guided=None):
    """The jobs of a case: one per orientation and lateral position (and per kz node, and grid).

    Mirror symmetry about x = 0 is used when the pattern is symmetric and the
    emitter sits on the mirror plane (x = 0). A point source has one job per
    orientation, position, wavelength and node of the kz integral
    (:mod:`fdtd_cases.kz`), carrying ``wavelength``, ``kz`` (in units of k0),
    ``kz_weight`` and ``picture`` (the one node of each dipole that records a
    field picture when asked: the smallest kz at the centre wavelength); ``guided`` maps a wavelength's index to the effective
    indices of the flat stack's guided modes there, from the exact solver: where it names any, the
    integral breaks at the indices the grid carries them at (:mod:`fdtd_cases.slab_modes`).
    A two-grid run (``layout.second``) adds the same jobs planned on the second grid, each
    carrying that grid's ``resolution`` and no picture; jobs of the case's own grid carry none.
    """
    jobs = _grid_jobs(case, layout, guided)
    if layout.second is not None:
        jobs += [{**job, "resolution": float(layout.second.resolution), "picture": False}
                 for job in _grid_jobs(case, layout.second, guided)]
    return jobs


def _grid_jobs(case, layout, guided):
    """The jobs of one grid (see :func:`plan_jobs`)."""
    jobs = [{"orientation": orientation, "x": float(x), "symmetric": bool(layout.symmetric and x == 0.0)}
            for orientation in case.emitter.orientations() for x in case.emitter.x]
    if case.emitter.source == "line":
        return jobs
    nodes = []
    centre = int(np.argmin(np.abs(layout.wavelengths - 1.0 / layout.fcen)))
    for i, wavelength in enumerate(layout.wavelengths):
        # The exact solver says whether the stack guides; the grid says where its modes are.
        modes = slab_modes.grid_indices(case, layout, wavelength) if (guided or {}).get(i) else ()
        u, w = kz.case_rule(case, wavelength, modes)
        nodes += [{"wavelength": float(wavelength), "kz": float(a), "kz_weight": float(b),
                   "picture": bool(i == centre and j == int(np.argmin(u)))} for j, (a, b) in enumerate(zip(u, w))]
    return [{**job, **node} for job in jobs for node in nodes]


def layout_of_job(layout, job):
    """The layout a planned job runs on: the case's own, or its second grid (a job with ``resolution``)."""
    if job.get("resolution", layout.resolution) == layout.resolution:
        return layout
    if layout.second is None or layout.second.resolution != job["resolution"]:
        raise ValueError(f"a job planned for {job['resolution']:g} points/µm, and the case's layout has no such grid")
    return layout.second


SUBNORMAL = "The value of the smallest subnormal"
"""Debian's numpy 1.24 warns so when Meep's module loads; not ours to fix."""

ORPHAN_CHECK_SECONDS = 1.0
"""How often a worker looks whether the process that started it is still there."""


def _exit_when_orphaned(parent):
    """Leave as soon as the parent is gone: a killed ``run`` must not leave Meep jobs running.

    A pool's workers outlive a parent killed by a signal it cannot handle (SIGKILL, or SIGTERM sent
    to it alone), and each would go on with its job and then wait for work forever (seen here: two
    workers of a killed run still stepping a point source minutes later).
    """
    import threading
    import time

    def watch():
        while os.getppid() == parent:
            time.sleep(ORPHAN_CHECK_SECONDS)
        os._exit(1)

    threading.Thread(target=watch, daemon=True, name="orphan-watch").start()


def _quiet_worker(parent):
    _exit_when_orphaned(parent)
    devnull = os.open(os.devnull, os.O_WRONLY)
    os.dup2(devnull, 1)
    import warnings
    warnings.filterwarnings("ignore", message=SUBNORMAL)


@contextlib.contextmanager
def _stdout_to_devnull():
    """Send this process's standard output (file descriptor 1, where Meep prints) to /dev/null for a while.

    What Python itself prints meanwhile goes there too; standard error (progress, warnings) stays.
    """
    import warnings

    sys.stdout.flush()
    saved, devnull = os.dup(1), os.open(os.devnull, os.O_WRONLY)
    os.dup2(devnull, 1)
    try:
        with warnings.catch_warnings():
            warnings.filterwarnings("ignore", message=SUBNORMAL)
            yield
    finally:
        sys.stdout.flush()
        os.dup2(saved, 1)
        os.close(saved)
        os.close(devnull)


def _label(job):
    """A job in a few words for the progress line."""
    if "incidence" in job:
        one = job["incidence"]
        return f"{one['kind']} {one['pol']} u={one['u']:.3f}"
    return f"{job['orientation']} x={job['x']:g}"


def run_planned(case, layout, job, field_map=False):
    """Run one planned job (:func:`plan_jobs`) in this process: a line job, one kz node of a point source,
    or (a job with ``incidence``: keyword arguments of :func:`fdtd_cases.meep_periodic.run_incidence`)
    one plane wave on a period of the top."""
    if "incidence" in job:  # a plane wave on one period of the top (the multi-pass model's texture response)
        from .meep_periodic import run_incidence
        return run_incidence(case, **job["incidence"])
    from .meep_job import run_job
    layout = layout_of_job(layout, job)
    field_map = field_map and job.get("picture", True)
    if "kz" in job:  # a node of a point source: Meep takes kz in cycles per µm
        return run_job(case, layout, job["orientation"], job["x"], job["symmetric"], field_map=field_map,
                       kz=job["kz"] / job["wavelength"], wavelength=job["wavelength"])
    return run_job(case, layout, job["orientation"], job["x"], job["symmetric"], field_map=field_map)


def run_jobs(case, layout, jobs, workers=None, progress=True, field_map=False):
    """Run ``jobs`` of one case and return their raw results in the same order.

    Parameters
    ----------
    workers : int, optional
        Worker processes (default: the number of cores, at most the number of jobs).
    progress : bool
        Show a progress bar on standard error.
    field_map : bool
        Also record each job's field picture (see :func:`fdtd_cases.meep_job.run_job`).
    """
    return run_many([(case, layout, job, field_map) for job in jobs], workers, progress)


def run_cases(cases, workers=None, progress=True):
    """Run every job of several (case, layout, jobs) triples in one pool.

    Returns, for each triple in order, its jobs merged with their raw results
    (the input of :func:`postprocess.analysis.analyse`).
    """
    planned = [jobs for _, _, jobs in cases]
    raw = run_many([(case, layout, job) for case, layout, jobs in cases for job in jobs], workers, progress)
    merged, at = [], 0
    for jobs in planned:
        merged.append([{**job, **result} for job, result in zip(jobs, raw[at:at + len(jobs)])])
        at += len(jobs)
    return merged


def run_many(items, workers=None, progress=True, on_result=None, on_error=None):
    """Run (case, layout, job) items, possibly of several cases, in one pool; results in order.

    ``on_result(i, result)`` is called in this process as each item finishes
    (a sweep writes its job file there); with ``on_error(i, exception)`` a
    failed item is reported to it and its result is None, without it the
    first failure is raised.
    """
    workers = max(1, min(workers or os.cpu_count() or 1, len(items)))
    results = [None] * len(items)
    bar = tqdm(total=len(items), desc="FDTD jobs", unit="job", file=sys.stderr, disable=not progress,
               bar_format="{desc}: {n_fmt}/{total_fmt} |{bar}| {elapsed} elapsed, {remaining} left")
    if len(items) == 1:
        # One job: no worker process to start (a second Python and Meep import, about a second).
        try:
            with _stdout_to_devnull():
                results[0] = run_planned(*items[0])
        except Exception as error:
            if on_error is None:
                raise
            on_error(0, error)
        else:
            if on_result is not None:
                on_result(0, results[0])
        bar.update()
        bar.close()
        return results
    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=workers, mp_context=context, initializer=_quiet_worker,
                             initargs=(os.getpid(),)) as pool:
        futures = {pool.submit(run_planned, *item): i for i, item in enumerate(items)}
        for future in as_completed(futures):
            i = futures[future]
            job = items[i][2]
            try:
                results[i] = future.result()
            except Exception as error:  # a failed job: reported per job when the caller asks for it
                if on_error is None:
                    raise
                on_error(i, error)
                bar.set_postfix_str(f"{_label(job)}: FAILED")
            else:
                if on_result is not None:
                    on_result(i, results[i])
                bar.set_postfix_str(f"{_label(job)}: {results[i]['wall_time']:.1f} s")
            bar.update()
    bar.close()
    return results
