"""What a case's grid and emitter sampling are expected to deliver: error estimates from measurements.

These are estimates from other chips (the measurements are named beside each constant), printed by
``outcouple check`` and beside every run's numbers; ``outcouple converge`` measures a case's own
grid error, and a two-grid run (``grid.extrapolate``) reports its own correction instead.
"""

import math

from .layout import material_indices

GRID_ERROR = {"flat": 0.0023, "grating": 0.0031, "triangle": 0.0011, "sine": 0.0039}
"""Measured error of a line-source run at 16 points per wavelength, divided by n^2 (n: the densest
index), per surface kind; the estimate scales as (16 / points per wavelength)^2 (second-order
convergence). Flat: bench/validate_line_grid.py, the worst orientation at n = 2.0, 2.5 and 3.5
(0.9%, 1.15%, 2.8%: 0.0023 n^2 within 20%). Textures: bench/validate_textures.py at n = 2.5, the
worst of the combined and the two in-plane dipoles against the extrapolated limit (grating
out-of-plane -1.90%, triangle out-of-plane -0.69%, sine parallel +2.40%). Random and profile
surfaces take the largest textured value (not measured: their shapes are the user's)."""

POINT_GRID_FACTOR = 2.0
"""Point sources carry more grid error than line sources of the same case: measured on flat chips
(worst dipole at 16 points per wavelength) +1.56% at n = 2.0 and +1.98% at n = 2.5
(bench/validate_point.py), +1.73% at n = 2.0 in a 16 µm wide domain (test_fdtd_point.py), against
0.0023 n^2 = 0.92% and 1.44% for line sources."""


def grid_error_estimate(case, resolution):
    """The expected relative error of the efficiency on this grid, and what it rests on.

    From :data:`GRID_ERROR` (measured per surface kind), scaled by the densest index squared and by
    (16 / points per wavelength)^2. An estimate from other chips, not a bound: ``outcouple converge``
    measures a case's own error.
    """
    n_max = max(material_indices(case).values())
    ppw = float(case.light.wavelengths().min()) * resolution / n_max
    kind = case.surface.pattern
    per_n2 = GRID_ERROR.get(kind) or max(v for k, v in GRID_ERROR.items() if k != "flat")
    measured = "measured" if kind in GRID_ERROR else "the largest measured on textures, not measured for this kind"
    factor, point = (POINT_GRID_FACTOR, ", point dipoles") if case.emitter.source == "point" else (1.0, "")
    return {"estimate": factor * per_n2 * n_max ** 2 * (16.0 / ppw) ** 2, "points_per_wavelength": ppw,
            "basis": f"{kind} surfaces{point} ({measured}), scaled as the square of the grid step"}


def positions_needed(case):
    """Emitter positions, evenly over one period, that average a periodic pattern to about 1%; None otherwise.

    Where the emitter sits in the period matters through the interference of plane waves in the
    chip that differ by a multiple m of the grating wavenumber 2 pi / period; both propagate only
    while m < 2 n period / lambda, so the efficiency's dependence on x holds harmonics of the
    period up to that m (higher ones are evanescent and fade with depth). N positions i period / N
    (the trapezoid rule) average harmonics below N exactly, hence N = floor(2 n period / lambda) + 1
    at the shortest wavelength. Measured (tests/test_ensembles.py, out-of-plane line emitter 0.6 µm
    deep): n = 2, period 1 µm at 1 µm, the rule's 5 positions give the 20-position average to 0.10%,
    4 positions to 1.5%, 2 to 12%, one to 22%.
    """
    period = getattr(case.surface, "period", None)
    if period is None:
        return None
    lam = float(case.light.wavelengths().min())
    return int(math.floor(2 * case.chip.index * period / lam)) + 1
