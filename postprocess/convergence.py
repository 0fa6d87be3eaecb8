"""Richardson extrapolation of a result computed at several grid resolutions.

A discretised result behaves as E(h) = E0 + C h^p + ... for small grid steps
h (Richardson 1911; the grid-convergence procedure of Roache, "Verification
and Validation in Computational Science and Engineering", 1998). The Yee
scheme is second order (p = 2, Taflove & Hagness, "Computational
Electrodynamics", ch. 4) where the materials are smooth or, as Meep does,
averaged at interfaces; staircased corners of patterns and metals can lower
the observed order.

With three resolutions the observed order is solved from the two
differences; when those do not shrink in step (oscillating or diverging
values: the grids are not yet in the asymptotic range), the formal order 2
is used with the two finest grids, and no level's error estimate is
smaller than the difference between the two finest.
"""

import numpy as np

FORMAL_ORDER = 2.0
ORDER_RANGE = (0.5, 6.0)


def _limit(h, e, p):
    """Extrapolated value from the two finest of (h, e), order p."""
    (h1, h2), (e1, e2) = h[-2:], e[-2:]
    return two_grids(e2, e1, 1 / h2, 1 / h1, p)


def observed_order(h, e):
    """Order p with (e1 - e0) / (e2 - e1) = (h0^p - h1^p) / (h1^p - h2^p), or None.

    ``h`` are three grid steps, coarsest first; None when the differences do
    not shrink monotonically towards the finest grid or p falls outside
    ORDER_RANGE.
    """
    d1, d2 = e[1] - e[0], e[2] - e[1]
    if d2 == 0 or d1 == 0 or d1 * d2 < 0 or abs(d2) >= abs(d1):
        return None
    target = d1 / d2

    def mismatch(p):
        return (h[0] ** p - h[1] ** p) / (h[1] ** p - h[2] ** p) - target

    lo, hi = ORDER_RANGE
    if mismatch(lo) * mismatch(hi) > 0:
        return None
    from scipy.optimize import brentq  # here: scipy.optimize takes 0.2 s to load, and only converge needs it

    return float(brentq(mismatch, lo, hi, rtol=1e-10))


def two_grids(fine, coarse, r_fine, r_coarse, order=FORMAL_ORDER):
    """Richardson's value from two grids: fine + (fine - coarse) / ((r_fine / r_coarse)^order - 1).

    ``fine`` and ``coarse`` are numbers or arrays of the same shape; ``r_*`` in points per µm.
    """
    fine, coarse = np.asarray(fine, dtype=float), np.asarray(coarse, dtype=float)
    return fine + (fine - coarse) / ((r_fine / r_coarse) ** order - 1)


def extrapolate(resolutions, values):
    """Richardson estimate of the grid-converged value and of each level's error.

    Parameters
    ----------
    resolutions : sequence of float
        Two or three grid resolutions (points per µm), any order.
    values : sequence of float
        The result at each resolution.

    Returns
    -------
    dict
        ``limit`` (extrapolated value), ``order`` (the order used),
        ``observed`` (True when the order was solved from three levels),
        ``asymptotic`` (False when three levels did not converge in step),
        ``errors`` (estimated |value - limit| at each given resolution, in
        the input order; when not asymptotic, at least the difference
        between the two finest levels).
    """
    order_in = np.argsort(resolutions)
    r = np.asarray(resolutions, dtype=float)[order_in]
    e = np.asarray(values, dtype=float)[order_in]
    if len(r) not in (2, 3) or len(set(r)) != len(r):
        raise ValueError("need two or three different resolutions")
    h = 1.0 / r
    p, observed, asymptotic = FORMAL_ORDER, False, True
    if len(r) == 3:
        found = observed_order(h, e)
        if found is None:
            asymptotic = False
        else:
            p, observed = found, True
    limit = float(_limit(h, e, p))
    errors = np.abs(e - limit)
    if not asymptotic:
        errors = np.maximum(errors, abs(e[-1] - e[-2]))
    back = np.empty_like(errors)
    back[order_in] = errors
    return {"limit": limit, "order": float(p), "observed": observed, "asymptotic": asymptotic,
            "errors": back.tolist()}
