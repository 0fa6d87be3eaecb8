"""A 3-D point dipole from 2-D runs: the quadrature over the out-of-plane wavenumber kz.

Every structure the package builds is invariant along z. Fourier-transformed
along z, a point dipole at z = 0 becomes, for each kz, a 2-D line source of
the same amplitude with phase exp(i kz z), and Parseval's theorem turns the
power through any surface into

    P_3D = (1/2 pi) integral_{-inf}^{inf} P_2D(kz) dkz = (1/pi) integral_0^{inf} P_2D(kz) dkz,

P_2D(kz) being the power per unit length of the 2-D run (even in kz: the
structure is mirror symmetric in z). In lossless materials nothing propagates
once kz exceeds the largest index times k0 (every field is evanescent in every
direction), so the integral ends at n_max k0. Written in u = kz / k0:

    P_3D = (k0 / pi) integral_0^{n_max} P_2D(u) du.

Where the integrand is not smooth (derived here from the plane-wave picture):

* at u = n of every half-space (ambient, substrate, an open chip): the
  in-plane wavenumber there, k0 sqrt(n^2 - u^2), goes to zero, so Fresnel
  coefficients and the power carried away behave like sqrt(n - u) (and
  like sqrt(u - n) on the other side);
* at u = n_eff of every guided mode of a lossless stack: a line source
  launches the mode with in-plane wavenumber k0 sqrt(n_eff^2 - u^2), and the
  power it carries grows like 1 / sqrt(n_eff - u) below n_eff and is absent
  above it. For a run, n_eff is where the grid carries the mode
  (:mod:`fdtd_cases.slab_modes`), which differs from the exact index by more
  than the nearest nodes lie from it.

The interval [0, n_max] is therefore cut at these breakpoints and each piece
is mapped so that square roots at its ends become smooth:

* the first piece [0, b] (u = 0 is an ordinary point of the even integrand):
  u = b sin(phi), phi in [0, pi/2], du = b cos(phi) dphi; near u = b,
  b - u ~ (pi/2 - phi)^2, so sqrt(b - u) and du / sqrt(b - u) are smooth in phi;
* every other piece [a, b]: u = a + (b - a) sin^2(psi), psi in [0, pi/2],
  du = (b - a) sin(2 psi) dpsi, which does the same at both ends.

Fringes set the node count. Light the emitter sends up and the light the
surface sends back interfere with the phase 2 q d, q = k0 sqrt(n^2 - u^2)
the wavenumber across the surface in the chip (index n) and d the depth
(2 q w for a chip of thickness w over a back side): across a piece [a, b]
below n that phase changes by Phi = 2 k0 L (sqrt(n^2 - a^2) - sqrt(n^2 - b^2)).
Near u = n the fringes crowd together (q -> 0, and the light that runs
along the surface cancels its own reflection), so a fixed node count fails
for deep emitters: a model integrand 1 - cos(2 q d) on [1, 2] (n = 2,
d = 0.6 wavelength) was integrated to 6% with 6 nodes and to 1e-5 with 12
(measured here). Each piece gets max(``grid.kz_nodes``, ceil(Phi / 2) + 4)
Gauss-Legendre nodes in phi or psi. The breakpoints move with the wavelength (k0 changes, and so do the guided
modes' effective indices), so the nodes are placed anew for every sampled
wavelength and each 2-D run computes the one wavelength it was placed for.

Absorbing materials: beyond n_max k0 the fields still carry a little power
into the absorber near the source; it is left out (of order alpha times the
emitter's contour, as in the line case). Guided modes of lossy stacks move
off the real axis and their peaks soften; they are still used as breakpoints
when given.
"""

import numpy as np

DEFAULT_NODES = 4
"""The least number of Gauss nodes per piece of the kz integral (``grid.kz_nodes``)."""

_TOUCH = 1e-6
"""Breakpoints closer than this (in u) are merged."""


def breakpoints(half_spaces, n_max, guided=()):
    """The pieces' ends in u = kz / k0, from 0 to ``n_max``, sorted.

    Parameters
    ----------
    half_spaces : iterable of float
        Real indices of the half-spaces (ambient, substrate, an open chip).
    n_max : float
        The largest real index of the structure: the end of the integral.
    guided : iterable of float
        Effective indices of guided modes.
    """
    points = sorted({0.0, float(n_max)} | {float(v) for v in (*half_spaces, *guided) if 0 < v < n_max})
    merged = [points[0]]
    for value in points[1:]:
        if value - merged[-1] > _TOUCH:
            merged.append(value)
    merged[-1] = float(n_max)
    return merged


def rule(breaks, counts=DEFAULT_NODES):
    """Nodes and weights (u_j, w_j) with integral_0^{breaks[-1]} f(u) du ~ sum_j w_j f(u_j).

    ``counts``: Gauss nodes per piece (one number for all, or one per piece).
    See the module docstring for the mappings; nodes never fall on a breakpoint.
    """
    pieces = list(zip(breaks[:-1], breaks[1:]))
    counts = [counts] * len(pieces) if np.ndim(counts) == 0 else list(counts)
    nodes, weights = [], []
    for i, ((a, b), count) in enumerate(zip(pieces, counts)):
        x, w = np.polynomial.legendre.leggauss(int(count))
        t = np.pi / 4 * (x + 1)            # Gauss nodes on [0, pi/2]
        wt = np.pi / 4 * w
        if i == 0:
            nodes.append(b * np.sin(t))
            weights.append(b * np.cos(t) * wt)
        else:
            nodes.append(a + (b - a) * np.sin(t) ** 2)
            weights.append((b - a) * np.sin(2 * t) * wt)
    return np.concatenate(nodes), np.concatenate(weights)


def half_spaces(case):
    """Real indices of the case's half-spaces: the ambient, a substrate, the chip when it has no back."""
    values = [case.ambient.index]
    if case.chip.back == "substrate":
        values.append(case.chip.back_index)
    if case.chip.back == "open":
        values.append(case.chip.index)
    return values


def largest_index(case):
    """The largest real index of the structure: where the kz integral ends (in units of k0)."""
    values = [case.ambient.index, case.chip.index, *(f.index for f in case.film)]
    if case.chip.back == "substrate":
        values.append(case.chip.back_index)
    return max(values)


def fringe_counts(breaks, n_chip, path, wavelength, least):
    """Nodes per piece: max(least, ceil(Phi / 2) + 4), Phi the change of 2 q ``path`` across the piece."""
    k0 = 2 * np.pi / wavelength
    counts = []
    for a, b in zip(breaks[:-1], breaks[1:]):
        phase = 0.0
        if a < n_chip:
            phase = 2 * k0 * path * (np.sqrt(n_chip ** 2 - a ** 2) - np.sqrt(n_chip ** 2 - min(b, n_chip) ** 2))
        counts.append(max(least, int(np.ceil(phase / 2)) + 4))
    return counts


def case_rule(case, wavelength, guided=()):
    """Nodes and weights in u = kz / k0 for the case at one wavelength (``guided``: effective indices)."""
    breaks = breakpoints(half_spaces(case), largest_index(case), guided)
    path = case.emitter.depth if case.chip.back == "open" else case.chip.thickness
    return rule(breaks, fringe_counts(breaks, case.chip.index, path, wavelength, case.grid.kz_nodes))
