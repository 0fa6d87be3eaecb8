"""``outcouple converge``: run a case at two or three resolutions and extrapolate.

By default the case's own resolution, 0.8 of it and 1.25 of it (a constant
ratio of 1.25; in 2-D a run costs about resolution^3, so the three together
cost about 3.5 runs of the case): the error estimate is reported for the
resolution the case would run at. When 0.8 of it would be too coarse for a
valid grid, the levels are 1, 1.25 and 1.5625 times it. ``--resolutions``
chooses the levels.
"""

from fdtd_cases.errors import CaseError
from fdtd_cases.layout import MIN_PPW_ERROR, at_resolution, make_layout
from fdtd_cases.runner import run_cases
from postprocess.convergence import extrapolate

from .jobs import jobs_of
from .summary import summarise

DEFAULT_FACTORS = (0.8, 1.0, 1.25)
FINER_FACTORS = (1.0, 1.25, 1.5625)


def levels(case, source, resolutions=None):
    """[(resolution, case, layout), ...] of the convergence study, coarsest first."""
    base = make_layout(case, source=source)
    densest = min(base.points_per_wavelength.values())  # points per wavelength at the case's resolution
    if resolutions is None:
        factors = DEFAULT_FACTORS
        if densest * DEFAULT_FACTORS[0] < MIN_PPW_ERROR:
            factors = FINER_FACTORS
        # Whole points per µm: Meep warns about fractional cell sizes otherwise (harmless, but noise).
        resolutions = [float(round(base.resolution * f)) for f in factors]
    out = []
    for resolution in sorted(set(resolutions)):
        level = at_resolution(case, resolution)  # one grid per level: the levels are the grids
        where = f"{source} (at resolution {resolution:g})"
        if densest * resolution / base.resolution < MIN_PPW_ERROR:
            raise CaseError("command line", "--resolutions", f"{resolution:g} points/µm gives fewer than "
                            f"{MIN_PPW_ERROR} points per wavelength in the densest material; choose finer levels")
        layout = make_layout(level, source=where)
        out.append((float(resolution), level, layout))
    return base.resolution, out


def run(case, source, resolutions=None, tolerance=0.02, workers=None, progress=True):
    """Efficiency at each level, the extrapolated value and the verdict, JSON-ready (``outcouple converge``)."""
    own, points = levels(case, source, resolutions)
    runs = run_cases([(c, lay, jobs_of(c, lay)) for _, c, lay in points], workers, progress)
    rows = []
    for (resolution, c, lay), merged in zip(points, runs):
        summary = summarise(c, merged, lay.wavelengths, lay.resolution)
        rows.append({"resolution": resolution, "points_per_wavelength": lay.points_per_wavelength["chip"],
                     "efficiency": summary["efficiency"], "by_orientation": summary["by_orientation"],
                     "exact": summary.get("reference", {}).get("efficiency"),
                     "wall_time": sum(j.get("wall_time", 0.0) for j in merged)})
    fit = extrapolate([r["resolution"] for r in rows], [r["efficiency"] for r in rows])
    for row, error in zip(rows, fit["errors"]):
        row["error_estimate"] = error
    judged = next((r for r in rows if abs(r["resolution"] - own) < 1e-9), rows[-1])
    relative = judged["error_estimate"] / fit["limit"] if fit["limit"] > 0 else float("inf")
    return {
        "case": str(source), "levels": rows, "extrapolated": fit["limit"], "order": fit["order"],
        "order_observed": fit["observed"], "asymptotic": fit["asymptotic"],
        "case_resolution": own, "judged_resolution": judged["resolution"],
        "judged_is_case_resolution": abs(judged["resolution"] - own) < 1e-9,
        "relative_error": relative, "tolerance": tolerance, "converged": bool(relative <= tolerance),
    }


def converge(case, resolutions=None, tolerance=0.02, workers=None, progress=True):
    """``outcouple converge``: a case (path, dict or Case) at two or three resolutions; see :func:`run`."""
    from .api import load_case

    case = load_case(case)
    return run(case, case._origin[0], resolutions, tolerance, workers, progress)
