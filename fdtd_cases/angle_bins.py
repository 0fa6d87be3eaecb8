"""The angle bins of the multi-pass model, shared by the texture's response and the model.

Inside the chip: equal intervals of u = sin(theta) over -1..1 (theta from the normal, in the x-y
plane; why these, :mod:`references.multipass`). In the ambient: one-degree bins of the escape angle.
"""

import numpy as np


def bin_edges(count):
    """Edges of ``count`` equal bins of u = sin(theta) over -1..1."""
    return np.linspace(-1.0, 1.0, count + 1)


def bin_centres(count):
    """Centres of the bins of :func:`bin_edges` (where the periodic-cell runs are lit)."""
    edges = bin_edges(count)
    return (edges[:-1] + edges[1:]) / 2


def far_edges():
    """Ambient angle bins of the far field, degrees: one degree each, -90..90."""
    return np.arange(-90.0, 91.0)


def spread(lo, hi, edges):
    """Fractions of a uniform distribution over [lo, hi] falling in each bin of ``edges``, clipped to
    the edges' span and renormalised (an order whose interval reaches past grazing keeps its power
    in the bins it does reach; one lying wholly outside goes to the end bin)."""
    lo_c, hi_c = max(lo, edges[0]), min(hi, edges[-1])
    out = np.zeros(len(edges) - 1)
    if hi_c <= lo_c:
        centre = min(max((lo + hi) / 2, edges[0]), edges[-1])
        out[min(np.searchsorted(edges, centre, side="right") - 1, len(out) - 1)] = 1.0
        return out
    overlap = np.clip(np.minimum(edges[1:], hi_c) - np.maximum(edges[:-1], lo_c), 0, None)
    return overlap / overlap.sum()
