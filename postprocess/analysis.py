"""The FDTD numbers of a run, from its jobs' saved line fields.

The same integration serves every command that reports a run (run, show,
sweep collect, compare, converge, report); the summary those commands print
(these numbers with the exact reference and the collection cone beside
them) is assembled in one place, :func:`outcouple.summary.summarise`.
"""

import numpy as np

from . import farfield, hemisphere
from .budget import bulk_power, job_fluxes, point_sources, position_stats, summarise
from .convergence import FORMAL_ORDER, two_grids

AXES = ("angle", "theta_z", "alpha")
"""Far-field entries that are angles, not powers."""


def analyse(case, jobs, wavelengths, resolution):
    """Efficiency, budget, per-orientation values and far field of a run.

    Parameters
    ----------
    case : fdtd_cases.case.Case
    jobs : list of dict
        Each with ``orientation``, ``x``, ``lines`` and ``source_current``
        (and for a point source ``wavelength``, ``kz``, ``kz_weight``; a job of a
        two-grid run's second grid has its ``resolution``).
    wavelengths : array
        Sampled vacuum wavelengths, µm.
    resolution : float
        Grid points per µm of the run (of the jobs without their own ``resolution``).
    """
    grids = {}
    for job in jobs:
        grids.setdefault(float(job.get("resolution", resolution)), []).append(job)
    if len(grids) > 2:
        raise ValueError(f"jobs of {len(grids)} grids ({sorted(grids)} points/µm); a run has one or two")
    (r_fine, fine), *coarse = sorted(grids.items(), reverse=True)
    summary = _analyse_grid(case, fine, wavelengths, r_fine)
    if coarse:
        (r_coarse, coarse), = coarse
        summary = extrapolated(summary, _analyse_grid(case, coarse, wavelengths, r_coarse), r_fine, r_coarse)
    return summary


def extrapolated(fine, coarse, r_fine, r_coarse):
    """A two-grid run's summary: every flux-derived number extrapolated (Richardson, order 2), the rest the finer grid's.

    Extrapolated: the efficiency, its spectrum, per orientation, per position and per job, the budget
    and the emission factor. The far field keeps the finer grid's shape, scaled by the extrapolated
    over the finer efficiency (per orientation for each orientation's pattern), so that its integral
    stays the efficiency; the balance error is the larger of the two grids'. ``grids`` records both
    grids' own values.
    """
    def rich(a, b):
        value = two_grids(a, b, r_fine, r_coarse)
        return value.tolist() if np.ndim(value) else float(value)

    out = dict(fine)
    for key in ("efficiency", "efficiency_spectrum", "emission_factor"):
        out[key] = rich(fine[key], coarse[key])
    out["by_orientation"] = {o: rich(v, coarse["by_orientation"][o]) for o, v in fine["by_orientation"].items()}
    out["budget"] = {k: rich(v, coarse["budget"][k]) for k, v in fine["budget"].items()}
    if fine.get("balance_error") is not None:
        out["balance_error"] = max(fine["balance_error"], coarse["balance_error"])
    if "positions" in fine:
        out["positions"] = position_stats(fine["positions"]["x"], rich(fine["positions"]["efficiency"],
                                                                       coarse["positions"]["efficiency"]))
    twins = {(j["orientation"], j["x"]): j for j in coarse["jobs"]}
    out["jobs"] = []
    for job in fine["jobs"]:
        twin = twins[(job["orientation"], job["x"])]
        out["jobs"].append({**job, **{k: rich(job[k], twin[k]) for k in ("efficiency", "emission_factor",
                                                                        "efficiency_spectrum")},
                            "budget": {k: rich(v, twin["budget"][k]) for k, v in job["budget"].items()}})
    ratio = out["efficiency"] / fine["efficiency"] if fine["efficiency"] > 0 else 1.0
    ratios = {o: out["by_orientation"][o] / v if v > 0 else 1.0 for o, v in fine["by_orientation"].items()}
    out["farfield"] = {k: v if k in AXES else
                       {o: _scaled(p, ratios[o]) for o, p in v.items()} if k == "by_orientation" else
                       _scaled(v, ratio) for k, v in fine["farfield"].items()}
    out["grids"] = {
        "resolution": [r_fine, r_coarse], "order": FORMAL_ORDER,
        "efficiency": [fine["efficiency"], coarse["efficiency"]],
        "by_orientation": {o: [v, coarse["by_orientation"][o]] for o, v in fine["by_orientation"].items()},
        "wall_time": [sum(j.get("wall_time", 0.0) for j in fine["jobs"]),
                      sum(j.get("wall_time", 0.0) for j in coarse["jobs"])],
    }
    return out


def _scaled(tree, factor):
    """A far-field entry (numbers, lists, dicts of them) times ``factor``, its angle axes left alone."""
    if isinstance(tree, dict):
        return {k: v if k in AXES else _scaled(v, factor) for k, v in tree.items()}
    if isinstance(tree, list):
        return [_scaled(v, factor) for v in tree]
    return tree * factor


def _analyse_grid(case, jobs, wavelengths, resolution):
    """:func:`analyse` for jobs of one grid."""
    if case.emitter.source == "point":
        return _analyse_point(case, jobs, wavelengths, resolution)
    combined = [{"orientation": job["orientation"], "x": job["x"],
                 "fluxes": job_fluxes(job["lines"], resolution),
                 "bulk": bulk_power(job["orientation"], wavelengths, job["source_current"])} for job in jobs]
    summary = summarise(combined, wavelengths, lossless=case.chip.alpha == 0)
    for entry, job in zip(summary["jobs"], jobs):
        for key in ("time_steps", "wall_time", "setup_time", "step_time", "stopped_by_decay"):
            if key in job:
                entry[key] = job[key]
    summary.update(far_field(case, jobs, combined, wavelengths, resolution))
    return summary


def _analyse_point(case, jobs, wavelengths, resolution):
    """The numbers of a point-source run: its dipoles integrated over kz, combined like line jobs.

    The far field covers the hemisphere (:mod:`postprocess.hemisphere`).
    """
    dipoles = point_sources(jobs, wavelengths, resolution, case.chip.index)
    summary = summarise(dipoles, wavelengths, lossless=case.chip.alpha == 0)
    for entry, dipole in zip(summary["jobs"], dipoles):
        nodes = dipole["nodes"]
        entry.update({"kz_runs": len(nodes), "time_steps": sum(int(n.get("time_steps", 0)) for n in nodes),
                      "wall_time": sum(float(n.get("wall_time", 0.0)) for n in nodes),
                      "stopped_by_decay": all(bool(n.get("stopped_by_decay", True)) for n in nodes)})
    summary.update({"source": "point", "kz_nodes": len(dipoles[0]["nodes"]) // len(wavelengths)})
    summary.update(hemisphere.far_field(dipoles, wavelengths, resolution, case.ambient.index))
    return summary


def far_field(case, jobs, combined, wavelengths, resolution):
    """Escaped power per degree of ambient angle, combined like the efficiency (docs/conventions.md).

    Each job's pattern (from its top line, :func:`postprocess.farfield.line_pattern`)
    is divided by its bulk power and summed over jobs and wavelengths, then
    divided by the sum of the emitted powers scaled the same way: the
    integral over angle is then the efficiency, up to the closure error
    reported as ``farfield_closure`` (far-field integral / top flux - 1).
    """
    angles = farfield.ANGLES
    per_degree = np.pi / 180
    total, emitted, top = np.zeros(len(angles)), 0.0, 0.0
    by_orientation = {}
    for job, entry in zip(jobs, combined):
        line = job["lines"]["top"]
        pattern = farfield.line_pattern(line["fields"], line["start"], line["end"], wavelengths, case.ambient.index,
                                        resolution=resolution)
        scaled = (pattern / entry["bulk"][:, None]).sum(axis=0) * per_degree
        job_emitted = float(np.sum(entry["fluxes"]["emitted"] / entry["bulk"]))
        total += scaled
        emitted += job_emitted
        top += float(np.sum(entry["fluxes"]["top"] / entry["bulk"]))
        own = by_orientation.setdefault(job["orientation"], [np.zeros(len(angles)), 0.0])
        own[0] += scaled
        own[1] += job_emitted
    intensity = total / emitted
    return {
        "farfield": {"angle": angles.tolist(), "intensity": intensity.tolist(),
                     "lambertian": farfield.lambertian(top / emitted, angles).tolist(),
                     "by_orientation": {o: (v / e).tolist() for o, (v, e) in by_orientation.items()}},
        "farfield_closure": float(np.trapz(total, angles) / top - 1) if top > 0 else None,
    }


def collection_summary(case, summary):
    """``collected`` and ``collection``: the power inside the case's collection cone.

    Beside the FDTD value: a Lambertian pattern carrying the same escaped
    power (2-D: sin(half-angle) of it; a point source's 3-D cone: sin^2, i.e.
    NA^2 / n_ambient^2) and, for flat cases, the exact planar value. A point
    source's ``farfield`` is per degree of polar angle from 0 to 90 degrees,
    so the same integral up to the half-angle gives the cone's power.
    """
    c = case.collection
    point = case.emitter.source == "point"
    half = c.degrees(case.ambient.index)
    na = c.na if c.na is not None else case.ambient.index * float(np.sin(np.radians(half)))
    ff = summary["farfield"]
    fraction = farfield.collected(ff["angle"], ff["intensity"], half)
    info = {"na": na, "half_angle": half,
            "of_escaped": fraction / summary["efficiency"] if summary["efficiency"] > 0 else None,
            "lambertian": summary["efficiency"] * float(np.sin(np.radians(half))) ** (2 if point else 1)}
    ref = summary.get("reference")
    if ref is not None:
        info["exact"] = farfield.collected(ref["farfield"]["angle"], ref["farfield"]["intensity"], half)
    return {"collected": fraction, "collection": info}
