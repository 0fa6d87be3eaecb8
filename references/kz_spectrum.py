"""The exact 2-D power of one out-of-plane wavenumber, for a point dipole under a flat open half-space.

A point dipole's 3-D power is (1/pi) integral_0^inf P_2D(kz) dkz (:mod:`fdtd_cases.kz`); this
module gives P_2D(kz) itself, exactly, from the same plane-wave expansion as the 3-D solver
(:mod:`references.multilayer`), so that each kz run of the FDTD and the quadrature over kz can
be checked on their own.

Derivation (here). The 3-D solver integrates over the transverse wavenumber kappa with the
azimuth already averaged: a part of polarisation s or p contributes e(kappa) dkappa. Before the
average, a dipole along x puts its p part on cos^2(phi) and its s part on sin^2(phi) (phi the
azimuth of (kx, kz) from x; each averages to 1/2), a dipole along z the other way round, and a
dipole along y (normal) has only p, independent of phi. With dkappa dphi = dkx dkz / kappa, the
power density over the (kx, kz) plane is

    along x:  (1/pi) [e_p cos^2 phi + e_s sin^2 phi] / kappa
    along y:  e_p / (2 pi kappa)

and P_3D = integral over the plane = 2 integral_0^inf dkz integral dkx density; the 2-D power of
one kz, normalised like fdtd_cases.kz (P_3D = (1/pi) integral_0^inf P_2D dkz), is therefore
P_2D(kz) = 2 pi integral_{-inf}^{inf} dkx density = 2 integral_0^inf dkx sum_parts e g / kappa,
g = 2 cos^2 phi, 2 sin^2 phi or 1 the part's azimuthal distribution (averaging to 1), with
kappa = sqrt(kx^2 + kz^2) >= kz. Powers are fractions of the
3-D bulk power of the dipole. ``top`` uses the escaping density (kappa below the ambient's k);
``emitted`` = the bulk part (the textbook pattern, Jackson 9.22: (3 pi / 2k)(1 - kz^2/k^2) along
z, (3 pi / 4k)(1 + kz^2/k^2) across it, times k0 in these units) plus the interference with the
reflected field, 2 Re(W A^2 q rho), integrated along real kx (no guided-mode poles in an open
half-space; the ambient's branch point is integrable).
"""

import numpy as np

from .multilayer import _amplitude_weight, _cavity, _escaping

PARTS = {"parallel": (("p", -1, "cos"), ("s", 1, "sin")),
         "out-of-plane": (("p", -1, "sin"), ("s", 1, "cos")),
         "normal": (("p", 1, "all"),)}
"""Dipole direction -> (polarisation, parity, azimuthal factor) of its parts (see the derivation)."""


def _factor(kind, kx, kappa):
    """2 cos^2 phi, 2 sin^2 phi or 1: each part's azimuthal distribution, averaging to 1."""
    if kind == "cos":
        return 2 * (kx / kappa) ** 2
    if kind == "sin":
        return 2 * (1 - (kx / kappa) ** 2)
    return np.ones_like(kx)


def _quad(f, a, b):
    """integral_a^b f, mapped by x = a + (b - a) sin^2 t so square-root ends integrate smoothly."""
    from scipy import integrate  # here, not at the top: scipy.integrate loads scipy.optimize (start-up time)

    def mapped(t):
        return f(a + (b - a) * np.sin(t) ** 2) * (b - a) * np.sin(2 * t)
    return integrate.quad(mapped, 0.0, np.pi / 2, limit=400, epsabs=1e-13, epsrel=1e-10)[0]


def spectrum(stack, depth, wavelength, orientation, u):
    """Exact top and emitted 2-D powers of one kz = u k0, as fractions of the 3-D bulk power.

    ``stack`` must be an open half-space (no guided modes); ``u`` < the chip's index.
    Returns {"top": float, "emitted": float}, normalised so that (k0 / pi) integral_0^n P du
    is the 3-D fraction (:func:`references.multilayer.emitter` with ``dim=3``).
    """
    k0 = 2 * np.pi / wavelength
    n = complex(stack.chip).real
    k_ref = n * k0
    kz = u * k0
    k_amb = stack.ambient * k0

    def density(kx, which):
        kx = np.atleast_1d(np.asarray(kx, dtype=float))
        kappa = np.sqrt(kx ** 2 + kz ** 2)
        total = np.zeros_like(kx)
        for pol, sigma, kind in PARTS[orientation]:
            if which == "top":
                value = _escaping(stack, pol, sigma, 3, k0, k_ref, kappa, depth)
            else:
                c = _cavity(stack, pol, sigma, k0, kappa.astype(complex), depth)
                a, w = _amplitude_weight(3, pol, sigma, k0, k_ref, kappa.astype(complex), c["kz"])
                value = 2 * np.real(w * a ** 2 * c["q"] * c["rho"])
            total = total + value * _factor(kind, kx, kappa) / kappa
        return total

    top = 0.0
    if u < stack.ambient:
        edge = np.sqrt(k_amb ** 2 - kz ** 2)
        top = 2 * _quad(lambda x: density(x, "top")[0], 0, edge)
    ends = [0.0]
    if u < stack.ambient:
        ends.append(np.sqrt(k_amb ** 2 - kz ** 2))
    ends.append(np.sqrt(max(k_ref ** 2 - kz ** 2, 0.0)))
    ends.append(ends[-1] + 40.0 / depth)
    reflected = 0.0
    for a, b in zip(ends[:-1], ends[1:]):
        if b > a:
            reflected += 2 * _quad(lambda x: density(x, "emitted")[0], a, b)
    ratio = u / n
    if orientation == "out-of-plane":  # the dipole along z
        bulk = 3 * np.pi / (2 * k_ref) * (1 - ratio ** 2)
    else:
        bulk = 3 * np.pi / (4 * k_ref) * (1 + ratio ** 2)
    return {"top": top, "emitted": bulk + reflected, "bulk": bulk}


def radiance(stack, depth, wavelength, orientation, s_x, s_z):
    """Exact escaped power per steradian of a point dipole under a flat stack, as a fraction of its 3-D
    bulk power, towards the ambient direction of cosines (s_x, s_y, s_z), s_x^2 + s_z^2 < 1.

    The density over the (kx, kz) plane is sum e g / (2 pi kappa) (the derivation above) and
    dkx dkz = k^2 s_y dOmega in the ambient (k = n_ambient k0), so the radiance is that density
    times k^2 s_y. The x-y plane is s_z = 0, the z-y plane s_x = 0.
    """
    k0 = 2 * np.pi / wavelength
    k = stack.ambient * k0
    s_x, s_z = np.broadcast_arrays(np.asarray(s_x, dtype=float), np.asarray(s_z, dtype=float))
    kx, kz = k * s_x, k * s_z
    kappa = np.maximum(np.hypot(kx, kz), 1e-9 * k)  # the density is finite at the normal
    kx = np.where(np.hypot(kx, kz) < 1e-9 * k, kappa, kx)  # and, there, that of any azimuth
    total = np.zeros_like(kappa)
    for pol, sigma, kind in PARTS[orientation]:
        total = total + (_escaping(stack, pol, sigma, 3, k0, complex(stack.chip).real * k0, kappa, depth)
                         * _factor(kind, kx, kappa) / kappa)
    return total / (2 * np.pi) * k ** 2 * np.sqrt(np.clip(1 - s_x ** 2 - s_z ** 2, 0, None))
