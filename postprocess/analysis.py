"""The reported numbers of a run, from saved fields, with the exact reference.

Used by ``outcouple run`` (on the fields just computed) and ``outcouple
show`` (on the fields read back from the HDF5 file), so both print the same
numbers from the same integration.
"""

import numpy as np

from references import reference

from . import farfield
from references.reference import CATEGORIES
from .budget import bulk_power, job_fluxes, summarise

FARFIELD_CLOSURE_WARN = 0.02
"""Far-field integral against the top flux: above this relative difference, a warning."""


def reference_applies(case):
    """The exact planar solver covers every flat case: films, absorption, any back side."""
    return case.surface.pattern == "flat"


def exact_reference(case):
    """Exact planar result of the case's line emitter, combined like the FDTD jobs."""
    result = reference.planar(case, dim=2, farfield=True)
    result["method"] = "exact plane-wave (angular-spectrum) expansion in the flat stack"
    return result


def analyse(case, jobs, wavelengths, resolution):
    """Summary of a run from its jobs' saved line fields.

    Parameters
    ----------
    case : fdtd_cases.case.Case
    jobs : list of dict
        Each with ``orientation``, ``x``, ``lines`` and ``source_current``.
    """
    combined = [{"orientation": job["orientation"], "x": job["x"],
                 "fluxes": job_fluxes(job["lines"], resolution),
                 "bulk": bulk_power(job["orientation"], wavelengths, job["source_current"])} for job in jobs]
    summary = summarise(combined, wavelengths, lossless=case.chip.alpha == 0)
    for entry, job in zip(summary["jobs"], jobs):
        for key in ("time_steps", "wall_time", "stopped_by_decay"):
            if key in job:
                entry[key] = job[key]
    summary.update(far_field(case, jobs, combined, wavelengths, resolution))
    if reference_applies(case):
        summary["reference"] = exact_reference(case)
    if case.collection is not None:
        summary.update(collection_summary(case, summary))
    return summary


def far_field(case, jobs, combined, wavelengths, resolution):
    """Escaped power per degree of ambient angle, combined like the efficiency (DESIGN.md).

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
    power (2-D: sin(half-angle) of it) and, for flat cases, the exact planar value.
    """
    c = case.collection
    half = c.degrees(case.ambient.index)
    na = c.na if c.na is not None else case.ambient.index * float(np.sin(np.radians(half)))
    ff = summary["farfield"]
    fraction = farfield.collected(ff["angle"], ff["intensity"], half)
    info = {"na": na, "half_angle": half,
            "of_escaped": fraction / summary["efficiency"] if summary["efficiency"] > 0 else None,
            "lambertian": summary["efficiency"] * float(np.sin(np.radians(half)))}
    ref = summary.get("reference")
    if ref is not None:
        info["exact"] = farfield.collected(ref["farfield"]["angle"], ref["farfield"]["intensity"], half)
    return {"collected": fraction, "collection": info}


def _pct(a, b):
    return f"{100 * (a / b - 1):+.2f}%" if b else "n/a"


def format_report(summary, title):
    """Plain-text tables of a summary."""
    ref = summary.get("reference")
    out = [title, ""]
    head = f"  {'wavelength/um':>13}  {'efficiency':>10}"
    if ref:
        head += f"  {'exact':>8}  {'diff':>8}"
    out.append(head)
    for i, (lam, eff) in enumerate(zip(summary["wavelengths"], summary["efficiency_spectrum"])):
        row = f"  {lam:>13.4f}  {eff:>10.4f}"
        if ref:
            row += f"  {ref['efficiency_spectrum'][i]:>8.4f}  {_pct(eff, ref['efficiency_spectrum'][i]):>8}"
        out.append(row)
    out += ["", f"  {'orientation':>13}  {'efficiency':>10}" + (f"  {'exact':>8}  {'diff':>8}" if ref else "")]
    for name, eff in summary["by_orientation"].items():
        row = f"  {name:>13}  {eff:>10.4f}"
        if ref:
            row += f"  {ref['by_orientation'][name]:>8.4f}  {_pct(eff, ref['by_orientation'][name]):>8}"
        out.append(row)
    if len(summary["by_orientation"]) > 1:
        row = f"  {'combined':>13}  {summary['efficiency']:>10.4f}"
        if ref:
            row += f"  {ref['efficiency']:>8.4f}  {_pct(summary['efficiency'], ref['efficiency']):>8}"
        out.append(row)
    b = summary["budget"]
    out += ["", "  power budget (fractions of the emitted power, all jobs and wavelengths):",
            f"    {'':>8}  {'top':>8}  {'bottom':>8}  {'sides':>8}  {'absorbed':>8}",
            f"    {'FDTD':>8}  " + "  ".join(f"{b[k]:>8.4f}" for k in CATEGORIES)]
    if ref:
        out.append(f"    {'exact':>8}  " + "  ".join(f"{ref['budget'][k]:>8.4f}" for k in CATEGORIES))
    if summary["balance_error"] is not None:
        out.append(f"    balance error (lossless: |emitted - top - bottom - sides| / emitted) "
                   f"{summary['balance_error']:.4f}")
    out.append(f"  emission factor (emitted / bulk power, mean) {summary['emission_factor']:.4f}"
               + (f"   exact {ref['emission_factor']:.4f}" if ref else ""))
    out += _farfield_lines(summary)
    unstopped = [j for j in summary["jobs"] if j.get("stopped_by_decay") is False]
    if unstopped:
        out.append(f"  WARNING: {len(unstopped)} job(s) hit the run-time limit before the fields decayed; "
                   "results may be unconverged")
    if ref:
        out.append(f"  exact: {ref['method']}")
    return "\n".join(out)


def _angle(value):
    return "n/a" if value is None else f"{value:.1f}"


def _farfield_lines(summary):
    """The far-field and collection lines of the plain-text report."""
    ff, ref = summary["farfield"], summary.get("reference")
    angles, intensity = np.array(ff["angle"]), np.array(ff["intensity"])
    peak = float(angles[np.argmax(intensity)])
    half = farfield.half_power_angle(angles, intensity)
    out = ["", "  far field in the ambient (all jobs and wavelengths; angles from the normal):",
           f"    peak at {peak:+.0f} deg; half of the escaped power within +/-{_angle(half)} deg"
           + (f" (exact {_angle(farfield.half_power_angle(ref['farfield']['angle'], ref['farfield']['intensity']))})"
              if ref else "") + "; a Lambertian pattern: +/-30.0 deg"]
    closure = summary["farfield_closure"]
    if closure is not None:
        out.append(f"    far-field integral against the top flux {closure:+.2%}")
        if abs(closure) > FARFIELD_CLOSURE_WARN:
            out.append(f"  WARNING: the far field's integral differs from the top flux by {closure:+.1%}: light "
                       "crosses the top monitor near its ends; a wider grid.width gives a truer far field")
    if "collected" in summary:
        c = summary["collection"]
        row = (f"    collected within NA {c['na']:.3f} (+/-{c['half_angle']:.1f} deg): {summary['collected']:.4f}"
               f" of the emitted power")
        if c["of_escaped"] is not None:
            row += f" ({c['of_escaped']:.1%} of the escaped)"
        out.append(row)
        out.append(f"    {'':>10}Lambertian with the same escaped power: {c['lambertian']:.4f}"
                   + (f"; exact: {c['exact']:.4f}  diff {_pct(summary['collected'], c['exact'])}"
                      if "exact" in c else ""))
    return out
