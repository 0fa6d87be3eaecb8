"""The FDTD numbers of a run, from its jobs' saved line fields.

The same integration serves every command that reports a run (run, show,
sweep collect, compare, converge, report); the summary those commands print
(these numbers with the exact reference and the collection cone beside
them) is assembled in one place, :func:`outcouple.summary.summarise`.
"""

import numpy as np

from . import farfield, hemisphere
from .budget import bulk_power, job_fluxes, point_sources, summarise


def analyse(case, jobs, wavelengths, resolution):
    """Efficiency, budget, per-orientation values and far field of a run.

    Parameters
    ----------
    case : fdtd_cases.case.Case
    jobs : list of dict
        Each with ``orientation``, ``x``, ``lines`` and ``source_current``
        (and for a point source ``wavelength``, ``kz``, ``kz_weight``).
    wavelengths : array
        Sampled vacuum wavelengths, µm.
    resolution : float
        Grid points per µm.
    """
    if case.emitter.source == "point":
        return _analyse_point(case, jobs, wavelengths, resolution)
    combined = [{"orientation": job["orientation"], "x": job["x"],
                 "fluxes": job_fluxes(job["lines"], resolution),
                 "bulk": bulk_power(job["orientation"], wavelengths, job["source_current"])} for job in jobs]
    summary = summarise(combined, wavelengths, lossless=case.chip.alpha == 0)
    for entry, job in zip(summary["jobs"], jobs):
        for key in ("time_steps", "wall_time", "stopped_by_decay"):
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
