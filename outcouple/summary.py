"""The summary of a run: the one place where the reported numbers are assembled.

``run``, ``show``, sweep ``collect``, ``compare``, ``converge`` and ``report``
all call :func:`summarise`, so every command prints the same numbers for the
same saved fields: the FDTD numbers (:func:`postprocess.analysis.analyse`),
for flat cases the exact planar reference beside them (of the line emitter or
the point dipole the run simulated), for line sources the exact efficiency of
a point dipole under the same stack with a flat surface (the 3-D baseline no
2-D number should be read without), and the power inside the case's
collection cone.
"""

from fdtd_cases.accuracy import grid_error_estimate
from postprocess import analysis, farfield, hemisphere
from references import reference


def exact_reference(case):
    """Exact planar result of the case's emitters, combined like the FDTD jobs (flat cases)."""
    if case.emitter.source == "point":
        result = reference.planar(case, dim=3, angles=hemisphere.POLAR)
        result["method"] = "exact plane-wave (angular-spectrum) expansion of the point dipole in the flat stack"
        return result
    result = reference.planar(case, dim=2, angles=farfield.ANGLES)
    result["method"] = "exact plane-wave (angular-spectrum) expansion in the flat stack"
    return result


def summarise(case, jobs, wavelengths, resolution):
    """The summary printed by ``run --json`` for ``jobs`` (each with its saved line fields).

    Parameters
    ----------
    case : fdtd_cases.case.Case
    jobs : list of dict
        Each with ``orientation``, ``x``, ``lines`` and ``source_current``.
    wavelengths : array
        Sampled vacuum wavelengths, µm.
    resolution : float
        Grid points per µm of the run.
    """
    summary = analysis.analyse(case, jobs, wavelengths, resolution)
    summary["grid_error"] = grid_error_estimate(case, resolution)
    if "grids" in summary:
        summary["grid_error"] = two_grid_error(summary, summary["grid_error"])
    if case.surface.pattern == "flat":  # the exact planar solver covers every flat case
        summary["reference"] = exact_reference(case)
    if case.emitter.source == "line":
        summary["point_dipole_baseline"] = flat_baseline(case, dim=3)
    if case.collection is not None:
        summary.update(analysis.collection_summary(case, summary))
    return summary


def two_grid_error(summary, single):
    """The error estimate of a two-grid run: the largest Richardson correction of an orientation.

    The correction is the finer grid's own error to leading order; what is left after it is of higher
    order. Measured on three flat chips (bench/validate_point_two_grids.py), the largest error left
    in any orientation was below the largest correction (0.84% against 1.86% at n = 2.5): an estimate
    from the run's own two grids, not a bound.
    """
    grids = summary["grids"]
    worst = max(abs(fine / summary["by_orientation"][o] - 1) for o, (fine, _) in grids["by_orientation"].items()
                if summary["by_orientation"][o] > 0) if summary["efficiency"] > 0 else 0.0
    return {"estimate": float(worst), "points_per_wavelength": single["points_per_wavelength"],
            "resolutions": grids["resolution"],
            "basis": "extrapolated from two grids, {:g} and {:g} points/um; the estimate is the largest correction the "
                     "extrapolation made to an orientation".format(*grids["resolution"])}


def flat_baseline(case, dim=2):
    """Exact planar efficiency of the case's stack with a flat surface (what a pattern must beat).

    ``dim`` 2: the line emitter; 3: the point dipole of the same orientations.
    """
    flat = case.model_copy(update={"surface": type(case).model_fields["surface"].default})
    return reference.planar(flat, dim=dim)["efficiency"]
