"""The reported numbers of a run, from saved fields, with the exact reference.

Used by ``outcouple run`` (on the fields just computed) and ``outcouple
show`` (on the fields read back from the HDF5 file), so both print the same
numbers from the same integration.
"""

from . import reference
from .reference import CATEGORIES
from .budget import bulk_power, job_fluxes, summarise


def reference_applies(case):
    """The exact planar solver covers every flat case: films, absorption, any back side."""
    return case.surface.pattern == "flat"


def exact_reference(case):
    """Exact planar result of the case's line emitter, combined like the FDTD jobs."""
    result = reference.planar(case, dim=2)
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
    if reference_applies(case):
        summary["reference"] = exact_reference(case)
    return summary


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
    unstopped = [j for j in summary["jobs"] if j.get("stopped_by_decay") is False]
    if unstopped:
        out.append(f"  WARNING: {len(unstopped)} job(s) hit the run-time limit before the fields decayed; "
                   "results may be unconverged")
    if ref:
        out.append(f"  exact: {ref['method']}")
    return "\n".join(out)

