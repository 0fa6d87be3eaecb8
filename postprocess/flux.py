"""Poynting flux through a monitor line from DFT fields saved on Meep's Yee grid.

A monitor line runs along x or y on a grid line, from ``start`` to ``end``
(N cells). On the Yee grid each tangential component sits either on the
integer points of the line (N + 1 samples, from start to end) or on the
half-integer points (N + 2 samples, from start - dx/2 to end + dx/2; the
component lies between grid lines along the line, and the outermost samples
fall just outside it). The two factors of each product in the normal Poynting
component share their positions:

* line along x (normal y): S_y = Re[conj(Ez) Hx] - Re[conj(Ex) Hz]
  (Ez, Hx integer; Ex, Hz half-integer);
* line along y (normal x): S_x = Re[conj(Ey) Hz] - Re[conj(Ez) Hy]
  (Ey, Hz half-integer; Ez, Hy integer).

Each product is integrated as a piecewise-linear function of position over
exactly [start, end] (trapezoid rule; for half-integer samples the value at
each end is the mean of the two samples around it). Meep's DFT fields
already carry Meep's convention, in which the flux is Re[conj(E) x H] with no
factor 1/2.
"""

import numpy as np


def _integrate(values, length, cells):
    """Integrate samples of a product along a line of ``cells`` cells of total ``length``."""
    dx = length / cells
    count = values.shape[-1]
    if count == cells + 1:
        return dx * (values.sum(axis=-1) - 0.5 * (values[..., 0] + values[..., -1]))
    if count == cells + 2:
        first = 0.5 * (values[..., 0] + values[..., 1])
        last = 0.5 * (values[..., -1] + values[..., -2])
        inner = values[..., 1:-1]
        # Half-cell pieces at both ends plus full cells between midpoints.
        return (dx * (inner.sum(axis=-1) - 0.5 * (inner[..., 0] + inner[..., -1]))
                + 0.25 * dx * (first + inner[..., 0]) + 0.25 * dx * (inner[..., -1] + last))
    raise ValueError(f"a line of {cells} cells has {cells + 1} or {cells + 2} Yee samples, not {count}")


def _product(fields, e, h):
    if e not in fields or h not in fields:
        return None
    return np.real(np.conj(fields[e]) * fields[h])


def line_flux(fields, start, end, normal, resolution):
    """Outward Poynting flux through one monitor line, per wavelength.

    Parameters
    ----------
    fields : dict
        Component name ("ex", "ey", "ez", "hx", "hy", "hz") -> complex array
        (n_wavelengths, n_samples) on the Yee grid, as saved by the runner.
        Only the components of one polarisation need be present.
    start, end : (float, float)
        End points of the line, µm, on grid lines.
    normal : {"+x", "-x", "+y", "-y"}
        Outward direction; the flux is taken along it.
    resolution : float
        Grid points per µm.

    Returns
    -------
    numpy.ndarray
        Flux per wavelength, in Meep's units (power per unit length in z).
    """
    (x1, y1), (x2, y2) = start, end
    along_x = normal[1] == "y"
    length = abs(x2 - x1) if along_x else abs(y2 - y1)
    cells = int(round(length * resolution))
    pairs = ((("ez", "hx"), 1.0), (("ex", "hz"), -1.0)) if along_x else ((("ey", "hz"), 1.0), (("ez", "hy"), -1.0))
    total = 0.0
    for (e, h), sign in pairs:
        product = _product(fields, e, h)
        if product is not None:
            total = total + sign * _integrate(product, length, cells)
    return total if normal[0] == "+" else -total
