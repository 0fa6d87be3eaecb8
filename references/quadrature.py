"""Composite Gauss-Legendre rules on straight (complex) segments, shared by the exact solvers."""

import numpy as np

NODES = 64
"""Gauss-Legendre nodes per panel."""
_LEGENDRE = np.polynomial.legendre.leggauss(NODES)


def gauss(a, b, panels):
    """Composite Gauss-Legendre nodes and weights on the (complex) segment a -> b."""
    x, w = _LEGENDRE
    edges = np.linspace(0, 1, panels + 1)
    t = ((edges[:-1, None] + edges[1:, None]) / 2 + (edges[1:, None] - edges[:-1, None]) / 2 * x).ravel()
    wt = ((edges[1:, None] - edges[:-1, None]) / 2 * w).ravel()
    return a + (b - a) * t, (b - a) * wt


def gauss_sqrt_ends(a, b, panels):
    """Nodes on the real interval [a, b] mapped by a cosine so end-point square roots integrate smoothly.

    With x = a + (b - a)(1 - cos t)/2, dx = (b - a) sin(t)/2 dt: a factor
    sqrt(x - a) sqrt(b - x) in the integrand becomes smooth in t.
    """
    t, w = gauss(0.0, np.pi, panels)
    t, w = t.real, w.real
    return a + (b - a) * (1 - np.cos(t)) / 2, (b - a) * np.sin(t) / 2 * w
