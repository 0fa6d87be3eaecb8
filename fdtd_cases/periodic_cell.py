"""The periodic cell of the top's response, planned without Meep (run by :mod:`fdtd_cases.meep_periodic`).

What the multi-pass model (``outcouple multipass``) asks of Meep: for each wavelength, polarisation
and angle bin, one plane wave from inside the chip on one period of the top, and one on a cell of
bare chip (:mod:`fdtd_cases.meep_periodic` describes the cell). Here: its grid, its heights, its
source pulse and the polarisation each emitter orientation radiates.
"""

import math

import numpy as np

from . import geometry
from .layout import whole_cells

POLARISATION_OF = {"out-of-plane": "s", "parallel": "p", "normal": "p"}
"""The 2-D polarisation an emitter orientation radiates: s (E along z) or p (E in the x-y plane)."""

SAVED_FIELDS = {"s": ("ez", "hx"), "p": ("ex", "hz")}
"""The (E, H) pair saved on a line along x per polarisation: the two whose product is the flux
through it (:mod:`postprocess.flux`). s has E along z (out-of-plane emitters), p has E in the x-y
plane (in-plane emitters); in 2-D the two never mix."""

RESPONSE_PPW = 24
"""Least points per wavelength in the densest material of the periodic cells. A flat n = 2.5 top
lit at normal incidence reflects 0.17845 at 16.8 points, 0.18238 at 33.6 and 0.18335 at 67.2, against
Fresnel's 0.18367 (second order in the grid); 24 points leave about 0.0025 of the incident power. The
cells are small, so they can afford more than the emitter's runs (16 by default)."""
FLAT_CELLS = 8
"""Cells across the period of a flat top (any period does; the light is one plane wave)."""
PML_WAVELENGTHS = 1.5
"""Thickness of each absorbing layer in vacuum wavelengths."""
PML_R0 = 1e-30
"""Nominal normal-incidence reflection of the absorbing layers: 1e-30^cos(theta) is 3e-5 at 81
degrees (Meep's PML reflects R0^cos(theta) of a wave at theta)."""
GAP_CELLS = 4
"""Grid cells between the source, the lines, the texture and the absorbing layers."""
PULSE_WIDTH = 0.3
"""Widest source pulse, relative to its frequency: short runs; the DFT takes the one frequency."""
MIN_PULSE_WIDTH = 0.002
"""Narrowest source pulse, relative to its frequency."""
MAX_PERIODS = 4000
"""Safety stop: at most this many periods of the light after the pulse."""


def response_grid(case, window):
    """{``resolution``, ``period``} of the periodic cells of a case.

    ``window``: the lateral size of the FDTD domain (µm), the supercell of patterns that are not
    periodic (``random``, ``profile``), which are repeated with that period. The resolution is the
    case's ``grid.resolution`` when given, else :data:`RESPONSE_PPW` (or the case's
    ``points_per_wavelength`` if higher) in the densest material at the shortest wavelength.
    """
    n_max = max([case.chip.index, case.ambient.index] + [f.index for f in case.film])
    lam_min = float(case.light.wavelengths().min())
    if case.grid.resolution is not None:
        resolution = case.grid.resolution
    else:
        resolution = math.ceil(max(RESPONSE_PPW, case.grid.points_per_wavelength) * n_max / lam_min)
    if case.surface.pattern == "flat":
        period = FLAT_CELLS / resolution
    else:
        period = getattr(case.surface, "period", None) or window
    cells, resolution = periodic_resolution(period, resolution)
    return {"resolution": float(resolution), "period": float(period)}


def pulse_width(kx, freq, period, indices):
    """Frequency width of the source pulse: at most ``PULSE_WIDTH`` of the frequency, and at most the
    distance to the nearest frequency at which a diffraction order turns grazing in the chip or the
    ambient (there its light has no speed across the cell, stays, and rings into the DFT). Meep's
    Gaussian pulse has the spectrum exp(-2 pi^2 (f - f0)^2 / fwidth^2): 3e-9 of its peak one width
    away. A bare cell (chip only) needs no narrow pulse, but takes its texture twin's: the two runs'
    fields are subtracted, so their sources must be the same.

    Measured on a flat n = 2.5 top at u = 0.9 with a pulse of 0.3: reflectance 1.006 where total
    reflection gives 1; with a width a quarter of the distance, 1.00000, and with the distance itself
    1.00000 in a third of the time steps.
    """
    reach = int(2 * max(indices) * freq * period) + 2
    orders = np.arange(-reach, reach + 1)
    cutoffs = np.abs(kx + orders / period)[:, None] / np.array(indices)[None, :]
    gap = float(np.min(np.abs(cutoffs - freq)))
    return float(min(PULSE_WIDTH * freq, max(gap, MIN_PULSE_WIDTH * freq)))


def periodic_resolution(period, resolution):
    """(cells per period, resolution): at least ``resolution``, with a whole number of cells per period
    whose product with the period is exact in floating point (else Meep would alter the period)."""
    cells = max(4, math.ceil(period * resolution - 1e-9))
    r = cells / period
    for _ in range(64):
        if period * r == cells:
            return cells, r
        r = float(np.nextafter(r, math.inf) if period * r < cells else np.nextafter(r, -math.inf))
    return cells, cells / period


def tiled_polyline(surface, period):
    """The surface over three periods, -1.5 to 1.5 periods: the period centred on x = 0 and its two
    copies (a pattern that is not periodic is made so: one window repeated, with a step at the seam)."""
    base = geometry.surface_polyline(surface, -period / 2, period / 2)
    parts = [base + [shift * period, 0.0] for shift in (-1, 0, 1)]
    return np.vstack([parts[0], parts[1][1:], parts[2][1:]])


def cell_layout(height, film_thickness, wavelength, resolution):
    """Grid-aligned heights of the cell (µm): ``y_bottom``, ``below``, ``source``, ``incident``,
    ``above``, ``y_top``, ``pml``, ``cell_y`` (the height); the texture spans -height..0, films 0..film_thickness.

    Every height is a whole number of cells divided by the resolution (not multiplied by the cell
    size: k * (1 / r) can miss the float k / r) and the cell has an even number of cells. A line off its
    grid line gets inconsistent fields: reflected plus transmitted power came out 1.024 above a film
    0.0833 µm thick in a cell of an odd number of cells, 1.000000 with the count made even."""
    pml = math.ceil(PML_WAVELENGTHS * wavelength * resolution - 1e-9)
    incident = math.floor(-height * resolution + 1e-9) - GAP_CELLS
    source, below = incident - GAP_CELLS, incident - 2 * GAP_CELLS
    above = math.ceil(film_thickness * resolution - 1e-9) + GAP_CELLS
    bottom = below - GAP_CELLS - pml
    count = above + GAP_CELLS + pml - bottom
    # Meep centres its grid on the cell's centre: an odd count would put every grid line half a cell
    # off the heights above. One more cell at the top keeps the count even.
    cells, length = whole_cells(count + count % 2, resolution)  # exact in floating point
    return {"pml": pml / resolution, "below": below / resolution, "source": source / resolution,
            "incident": incident / resolution, "above": above / resolution, "y_bottom": bottom / resolution,
            "y_top": (bottom + cells) / resolution, "cell_y": length}
