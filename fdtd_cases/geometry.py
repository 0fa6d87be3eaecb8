"""Surface patterns as polylines, and the chip as one polygon in the (x, y) plane.

The geometry is generated once here and shared by every consumer (the Meep
builder, previews, later the ray tracer), so all of them solve the same
structure. Conventions (docs/conventions.md): y points up into the ambient; y = 0 is the
top of the chip before patterning and the highest point of the surface;
patterns are cut downward from there; periodic patterns are symmetric about
x = 0 (a grating ridge, a triangle apex, a sine crest sit on x = 0).
"""

import math

import numpy as np

SINE_POINTS_PER_PERIOD = 48
"""Polyline vertices per period of a sine pattern (sag error ~ height * 2e-3)."""


def _periods(x_min, x_max, period):
    """Integer period indices covering [x_min, x_max] with one spare each side."""
    return np.arange(math.floor(x_min / period) - 1, math.ceil(x_max / period) + 2)


def _grating(surface, x_min, x_max):
    half = surface.fill * surface.period / 2
    h = surface.height
    points = []
    for k in _periods(x_min, x_max, surface.period):
        c = k * surface.period
        points += [(c - half, -h), (c - half, 0.0), (c + half, 0.0), (c + half, -h)]
    return np.array(points)


def _triangle(surface, x_min, x_max):
    p, h = surface.period, surface.height
    points = []
    for k in _periods(x_min, x_max, p):
        points += [(k * p, 0.0), ((k + 0.5) * p, -h)]
    return np.array(points)


def _sine(surface, x_min, x_max):
    p, h = surface.period, surface.height
    k = _periods(x_min, x_max, p)
    x = np.arange(k[0] * SINE_POINTS_PER_PERIOD, k[-1] * SINE_POINTS_PER_PERIOD + 1) * (p / SINE_POINTS_PER_PERIOD)
    return np.column_stack([x, -0.5 * h * (1 - np.cos(2 * np.pi * x / p))])


def random_heights(rms, correlation, seed, x):
    """A Gaussian-correlated random profile sampled at the evenly spaced ``x``.

    White noise is convolved with exp(-2 x^2 / L^2), whose autocorrelation is
    exp(-x^2 / L^2) (the convolution of two Gaussians of variance L^2/4 has
    variance L^2/2). The sample is then scaled so that its rms over ``x`` is
    exactly ``rms``, and shifted so that its highest point is y = 0.
    """
    step = x[1] - x[0]
    rng = np.random.default_rng(seed)
    reach = int(math.ceil(3 * correlation / step))
    noise = rng.standard_normal(len(x) + 2 * reach)
    kernel_x = np.arange(-reach, reach + 1) * step
    kernel = np.exp(-2 * kernel_x**2 / correlation**2)
    smooth = np.convolve(noise, kernel, mode="valid")
    smooth -= smooth.mean()
    smooth *= rms / np.sqrt(np.mean(smooth**2))
    return smooth - smooth.max()


def _random(surface, x_min, x_max):
    step = surface.correlation / 8
    count = int(math.ceil((x_max - x_min) / step)) + 1
    x = x_min + step * np.arange(count)
    return np.column_stack([x, random_heights(surface.rms, surface.correlation, surface.seed, x)])


def _profile(surface, x_min, x_max):
    pts = np.array(surface.points, dtype=float)
    left = [(min(x_min, pts[0, 0]) - 1.0, pts[0, 1])]
    right = [(max(x_max, pts[-1, 0]) + 1.0, pts[-1, 1])]
    return np.vstack([left, pts, right])


_BUILDERS = {
    "flat": lambda surface, x_min, x_max: np.array([(x_min, 0.0), (x_max, 0.0)]),
    "grating": _grating,
    "triangle": _triangle,
    "sine": _sine,
    "random": _random,
    "profile": _profile,
}


def _clip(points, x_min, x_max):
    """Cut a polyline (x non-decreasing, vertical steps allowed) to [x_min, x_max]."""
    def height_at(x0):
        # The last vertex at or left of x0 and the first right of it bound the segment.
        i = np.searchsorted(points[:, 0], x0, side="right")
        i = min(max(i, 1), len(points) - 1)
        (xa, ya), (xb, yb) = points[i - 1], points[i]
        return ya if xb == xa else ya + (yb - ya) * (x0 - xa) / (xb - xa)

    inside = points[(points[:, 0] > x_min) & (points[:, 0] < x_max)]
    return np.vstack([[x_min, height_at(x_min)], inside, [x_max, height_at(x_max)]])


def surface_polyline(surface, x_min, x_max):
    """The surface as an (N, 2) polyline over [x_min, x_max], x non-decreasing.

    Parameters
    ----------
    surface : fdtd_cases.case.Flat | Grating | Triangle | Sine | Random | Profile
    x_min, x_max : float
        Lateral span, µm (the whole simulation cell, so the pattern runs into
        the absorbing layers as an unbounded pattern would).
    """
    points = _BUILDERS[surface.pattern](surface, x_min, x_max)
    clipped = _clip(points, x_min, x_max)
    # Drop repeated vertices (a grating edge on the clip line) so the polygon stays simple.
    keep = np.ones(len(clipped), bool)
    keep[1:] = np.any(np.abs(np.diff(clipped, axis=0)) > 1e-12, axis=1)
    return clipped[keep]


def chip_polygon(polyline, y_bottom):
    """The chip as a closed polygon: the surface, then down to ``y_bottom``.

    Vertices run left to right along the surface and back along the bottom,
    i.e. clockwise; the closing edge is implied.
    """
    x_min, x_max = polyline[0, 0], polyline[-1, 0]
    return np.vstack([polyline, [[x_max, y_bottom], [x_min, y_bottom]]])


def is_mirror_symmetric(surface, polyline, tol=1e-9):
    """True when the surface is symmetric about x = 0 over the polyline's span."""
    if surface.pattern in ("flat", "grating", "triangle", "sine"):
        return True
    if surface.pattern == "random":
        return False
    x, y = polyline[:, 0], polyline[:, 1]
    if np.any(np.diff(x) <= 0):
        return False
    reach = min(-x[0], x[-1])
    probe = np.linspace(-reach, reach, 2001)
    return bool(np.allclose(np.interp(probe, x, y), np.interp(-probe, x, y), atol=tol))


def deepest_point(polyline):
    """The lowest y of the surface, µm (0 for a flat surface)."""
    return float(polyline[:, 1].min())


def surface_depth_at(polyline, x0):
    """Surface height y at lateral position x0 (the lowest, at a vertical wall)."""
    x, y = polyline[:, 0], polyline[:, 1]
    at = np.isclose(x, x0)
    if np.any(at):
        return float(y[at].min())
    return float(np.interp(x0, x, y))
