"""Guided modes of the flat stack as the FDTD grid carries them: where a point source's kz integral breaks.

The kz integral of a point source (:mod:`fdtd_cases.kz`) has an inverse square-root peak just below
every guided mode's effective index and nothing above it. The exact planar solver finds those
indices for the continuous stack; Meep's grid carries each mode at a slightly different one (its
numerical dispersion). Nodes sit within 1e-3 of a breakpoint, closer than that shift: measured on a
0.35 um n = 2.0 chip on n = 1.5 at 16 points per chip wavelength, the grid's s mode is at 1.80112
against the exact 1.80280, a node at 1.802 then fell above the grid's mode and missed the peak, and
the parallel point dipole came out 6.8% high. So the breakpoints of a run are the grid's own
indices, computed here.

At kx = 0 a 2-D run with Bloch phase exp(i kz z) is a 1-D problem across the layers, on the rows of
Meep's Yee grid (y = j dx for Ex and Ez, (j + 1/2) dx for Ey and Hx), with z exact. Derived from
Maxwell's curl equations with d/dz = i kz and d/dx = 0, the time derivative replaced by Meep's
leapfrog step (omega -> Omega = (2 / dt) sin(omega dt / 2), dt = Courant x dx):

* s (E along x): (Ex[j+1] - 2 Ex[j] + Ex[j-1]) / dx^2 + Omega^2 eps_t[j] Ex[j] = kz^2 Ex[j];
* p (H along x): eps_y d(eps_z^-1 d Hx) + Omega^2 eps_y Hx = kz^2 Hx, with d the difference
  between neighbouring rows; made symmetric by Hx = sqrt(eps_y) g.

eps is Meep's average over each grid point's cell for a planar interface: the mean of eps for the
components along the layers (Ex, Ez), the mean of 1/eps inverted for the one across them (Ey).
The eigenvalues kz^2 above the densest cladding's line are the guided modes; the domain ends
three wavelengths beyond the outermost layer on both sides (a mode reaching further is at its
cut-off and carries almost nothing). As the grid is refined they tend to the exact solver's
indices (test_kz.py).
"""

import numpy as np

from .layout import COURANT

MARGIN = 3.0
"""Wavelengths of cladding kept beyond the outermost interface on each side."""


def stack_layers(case, layout):
    """(layers, lower cladding index, upper cladding index) of the flat stack: layers as (y_low, y_high, index)."""
    layers = [(y_low, y_high, index) for y_low, y_high, index, _ in layout.films]
    bottom = -case.chip.thickness if np.isfinite(case.chip.thickness) else None
    lower = case.chip.back_index if case.chip.back == "substrate" else case.chip.index
    if bottom is None:
        return layers, case.chip.index, case.ambient.index
    return [(bottom, 0.0, case.chip.index)] + layers, lower, case.ambient.index


def _averaged(rows, dx, pieces):
    """Arithmetic and harmonic means of eps over the cell of each row; ``pieces``: (y_low, y_high, index) covering all y."""
    eps = np.zeros(len(rows))
    inverse = np.zeros(len(rows))
    for i, y in enumerate(rows):
        lo, hi = y - dx / 2, y + dx / 2
        for a, b, n in pieces:
            overlap = max(0.0, min(hi, b) - max(lo, a))
            eps[i] += overlap * n * n
            inverse[i] += overlap / (n * n)
    return eps / dx, dx / inverse


def grid_indices(case, layout, wavelength):
    """Effective indices (kz / k0) of the guided modes the grid carries at ``wavelength``, sorted, s and p together."""
    from scipy.linalg import eigh_tridiagonal  # here: scipy.linalg takes 0.1 s to load, and few cases need it

    if case.chip.back in ("mirror", "metal"):
        raise ValueError("grid_indices: metal and mirror backs are not modelled here (point sources refuse them)")
    layers, lower, upper = stack_layers(case, layout)
    if not layers:
        return []
    dx = 1.0 / layout.resolution
    dt = COURANT * dx
    omega = 2 * np.pi / wavelength
    big_omega = 2 / dt * np.sin(omega * dt / 2)
    bottom = min(a for a, _, _ in layers)
    top = max(b for _, b, _ in layers)
    first = int(np.floor((bottom - MARGIN * wavelength) * layout.resolution))
    last = int(np.ceil((top + MARGIN * wavelength) * layout.resolution))
    rows = np.arange(first, last + 1) * dx
    half = rows[:-1] + dx / 2
    pieces = [(-np.inf, bottom, lower), *layers, (top, np.inf, upper)]

    eps_t, _ = _averaged(rows, dx, pieces)
    s_modes = eigh_tridiagonal(-2 / dx ** 2 + big_omega ** 2 * eps_t, np.full(len(rows) - 1, 1 / dx ** 2),
                               eigvals_only=True)

    _, eps_y = _averaged(half, dx, pieces)
    eps_z, _ = _averaged(rows[1:-1], dx, pieces)
    w = 1 / (eps_z * dx ** 2)
    diagonal = np.zeros(len(half))
    diagonal[:-1] += w
    diagonal[1:] += w
    root = np.sqrt(eps_y)
    p_modes = eigh_tridiagonal(-eps_y * diagonal + big_omega ** 2 * eps_y, root[:-1] * w * root[1:],
                               eigvals_only=True)

    line = big_omega ** 2 * max(lower, upper) ** 2
    found = np.concatenate([s_modes[s_modes > line], p_modes[p_modes > line]])
    return sorted(float(v) for v in np.sqrt(found) / omega)
