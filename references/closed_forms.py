"""Closed-form estimates: escape cones, randomising surfaces, the multi-pass model.

All fractions are of the emitter's (or the internal light's) power; chip
index n, ambient index n_a < n, theta_c = arcsin(n_a / n). ``dim`` = 2 is the
line emitter of the FDTD (radiation in the x-y plane), 3 the point dipole.

Escape cone without Fresnel losses, 3-D (integrating the bulk dipole
patterns over the cone; e.g. Lukosz, JOSA 71, 744 (1981); the isotropic
value is the textbook (1 - cos theta_c)/2, Schubert, "Light-Emitting
Diodes", 2nd ed., sec. 5.2). Per steradian a vertical dipole radiates
(3 / 8 pi) sin^2 theta, a horizontal one (azimuth-averaged)
(3 / 16 pi)(1 + cos^2 theta); 2 pi integral_0^theta_c ... sin theta dtheta:

    normal (vertical):      1/2 - 3/4 cos theta_c + 1/4 cos^3 theta_c
    parallel (horizontal):  1/2 - 3/8 cos theta_c - 1/8 cos^3 theta_c
    isotropic (2 horizontal + 1 vertical, equal power): (1 - cos theta_c) / 2
                            ~ theta_c^2 / 4 ~ n_a^2 / (4 n^2) for large n

Escape cone, 2-D (derived here): the line-emitter patterns per radian are
1/(2 pi), cos^2 theta / pi and sin^2 theta / pi (out-of-plane, parallel,
normal); over |theta| < theta_c they give theta_c / pi,
(theta_c + sin theta_c cos theta_c) / pi and (theta_c - sin cos) / pi, and
theta_c / pi for the isotropic mix.

With Fresnel losses the same integrals carry the interface transmission
T(theta) of the emitter's polarisation (s for the out-of-plane line and the
s part of a horizontal dipole, p otherwise): one-dimensional quadratures,
with no interference (a thick chip, depth-averaged).

Randomising (Lambertian) surface: internal light of uniform radiance meets
the surface with a flux distribution proportional to cos theta; the part
inside the escape cone is sin^2 theta_c = (n_a / n)^2 in 3-D (Yablonovitch,
JOSA 72, 899 (1982)) and sin theta_c = n_a / n in 2-D (derived here, weight
cos theta dtheta).

Multi-pass model of a randomising top over a chip of thickness w,
intensity absorption alpha, specular back side of reflectivity R (derived
here in the manner of Yablonovitch 1982). Every arrival at the top is
randomised into a Lambertian direction: inside the escape cone it leaves
(probability p above, with no interface loss), outside it goes down in that
direction, is reflected specularly and comes back up along the same angle,
surviving S = R t_out(2 alpha w), where t_out(x) is the mean of
e^{-x / cos theta} over the Lambertian directions outside the cone:

    3-D: t_out(x) = integral_tc^{pi/2} cos sin e^{-x/cos} dtheta / (cos^2 tc / 2)
    2-D: t_out(x) = integral_tc^{pi/2} cos e^{-x/cos} dtheta / (1 - sin tc)

Light emitted isotropically at depth d arrives at the top first with
f0 = 1/2 tau(alpha d) + 1/2 R tau(alpha (2 w - d)) (half goes up, half goes
down and comes back specularly), tau being the transmittance of isotropic
emission through a thickness: E_2 in 3-D (the exponential integral),
(2/pi) integral_0^{pi/2} e^{-x / cos theta} dtheta in 2-D. Summing the passes:

    eta = f0 p / (1 - (1 - p) S)

Weak absorption with a perfect back (R = 1, alpha w << 1): the mean of
1/cos theta outside the cone is 2 / cos tc (3-D) or (pi/2 - tc) / (1 - sin tc)
(2-D), so

    3-D: eta ~ 1 / (1 + 4 (n/n_a)^2 cos(tc) alpha w)
    2-D: eta ~ 1 / (1 + 2 (n/n_a) (pi/2 - tc) alpha w)

and for large n (cos tc -> 1, tc -> 0) these become Yablonovitch's
1 / (1 + 4 n^2 alpha w) and 1 / (1 + pi n alpha w).
"""

import numpy as np

from .planar import critical_angle, fresnel


def _cos_c(n_chip, n_ambient):
    return np.cos(critical_angle(n_chip, n_ambient))


def escape_cone(orientation, n_chip, n_ambient=1.0, dim=2, fresnel_losses=False):
    """Escaped fraction of a thick chip's emitter through a flat top (no interference).

    Parameters
    ----------
    orientation : {"parallel", "normal", "out-of-plane", "isotropic", "in-plane"}
    n_chip, n_ambient : float
        Real indices.
    dim : {2, 3}
    fresnel_losses : bool
        Weight the cone by the interface transmission (quadrature) instead of 1.
    """
    from scipy import integrate  # here: scipy.integrate loads scipy.optimize (start-up time)

    tc = critical_angle(n_chip, n_ambient)
    if orientation == "in-plane":  # the two in-plane directions, equal intrinsic strength
        return sum(escape_cone(o, n_chip, n_ambient, dim, fresnel_losses) for o in ("parallel", "out-of-plane")) / 2
    if orientation == "isotropic":
        if not fresnel_losses:
            return tc / np.pi if dim == 2 else (1 - np.cos(tc)) / 2
        parts = [escape_cone(o, n_chip, n_ambient, dim, True) for o in ("parallel", "normal", "out-of-plane")]
        return sum(parts) / 3
    if not fresnel_losses:
        c, sc = np.cos(tc), np.sin(tc) * np.cos(tc)
        if dim == 2:
            return {"out-of-plane": tc / np.pi, "parallel": (tc + sc) / np.pi, "normal": (tc - sc) / np.pi}[orientation]
        if orientation == "normal":
            return 0.5 - 0.75 * c + 0.25 * c ** 3
        return 0.5 - 0.375 * c - 0.125 * c ** 3

    def transmission(theta):
        _, _, t_s, t_p = fresnel(n_chip, n_ambient, theta)
        return float(t_s), float(t_p)

    if dim == 2:
        def density(theta):
            t_s, t_p = transmission(theta)
            return {"out-of-plane": t_s / (2 * np.pi), "parallel": t_p * np.cos(theta) ** 2 / np.pi,
                    "normal": t_p * np.sin(theta) ** 2 / np.pi}[orientation]
        return 2 * integrate.quad(density, 0, tc, epsabs=1e-13, epsrel=1e-11)[0]

    def density3(theta):
        t_s, t_p = transmission(theta)
        s, c = np.sin(theta), np.cos(theta)
        if orientation == "normal":
            value = 3 / (8 * np.pi) * s ** 2 * t_p
        else:
            value = 3 / (16 * np.pi) * (t_s + c ** 2 * t_p)
        return 2 * np.pi * value * s
    return integrate.quad(density3, 0, tc, epsabs=1e-13, epsrel=1e-11)[0]


def large_index_cone(n_chip, n_ambient=1.0):
    """The textbook approximation n_a^2 / (4 n^2) of the 3-D isotropic escape cone (large n)."""
    return n_ambient ** 2 / (4 * n_chip ** 2)


def lambertian_escape(n_chip, n_ambient=1.0, dim=3):
    """Fraction of randomised (Lambertian) internal light meeting the surface that lies in the escape cone."""
    s = n_ambient / n_chip
    return min(1.0, s ** 2 if dim == 3 else s)


def _lambertian_mean(x, lower, dim):
    """Mean of e^{-x / cos theta} over Lambertian directions with theta from ``lower`` to pi/2."""
    from scipy import integrate  # here: scipy.integrate loads scipy.optimize (start-up time)

    if dim == 3:
        num = integrate.quad(lambda th: np.cos(th) * np.sin(th) * np.exp(-x / max(np.cos(th), 1e-300)),
                             lower, np.pi / 2, epsabs=1e-14, epsrel=1e-12)[0]
        return num / (np.cos(lower) ** 2 / 2)
    num = integrate.quad(lambda th: np.cos(th) * np.exp(-x / max(np.cos(th), 1e-300)), lower, np.pi / 2,
                         epsabs=1e-14, epsrel=1e-12)[0]
    return num / (1 - np.sin(lower))


def lambertian_transmittance(attenuation, dim=3):
    """Transmittance of Lambertian light through an absorbing thickness; ``attenuation`` = alpha * w.

    3-D: 2 E_3(alpha w); 2-D: integral_0^{pi/2} cos theta e^{-alpha w / cos theta} dtheta.
    """
    from scipy import special  # here, not at the top: start-up time

    x = float(attenuation)
    if x == 0:
        return 1.0
    if dim == 3:
        return float(2 * special.expn(3, x))
    return _lambertian_mean(x, 0.0, 2)


def isotropic_transmittance(attenuation, dim=3):
    """Transmittance tau of isotropic emission from a point through an absorbing thickness (alpha * d)."""
    from scipy import integrate, special  # here: scipy.integrate loads scipy.optimize (start-up time)

    x = float(attenuation)
    if x == 0:
        return 1.0
    if dim == 3:
        return float(special.expn(2, x))
    return 2 / np.pi * integrate.quad(lambda th: np.exp(-x / max(np.cos(th), 1e-300)), 0, np.pi / 2,
                                      epsabs=1e-14, epsrel=1e-12)[0]


def round_trip(n_chip, n_ambient, alpha_per_um, thickness, back_reflectivity, dim=3):
    """S: survival of randomised light sent down outside the escape cone and back (see the module text)."""
    if alpha_per_um == 0:
        return back_reflectivity
    tc = critical_angle(n_chip, n_ambient)
    return back_reflectivity * _lambertian_mean(2 * alpha_per_um * thickness, tc, dim)


def multipass(n_chip, n_ambient, alpha_per_um, thickness, depth, back_reflectivity, dim=3, escape=None):
    """Extraction efficiency of a randomising top over an absorbing chip (the multi-pass model).

    Parameters
    ----------
    alpha_per_um : float
        Intensity attenuation coefficient of the chip, 1/µm.
    thickness, depth : float
        Chip thickness and emitter depth, µm (``thickness`` may be ``inf``:
        then nothing comes back from below).
    back_reflectivity : float
        Reflectivity R of the (specular) back side, 0..1.
    escape : float, optional
        Escape probability per arrival at the top; default
        :func:`lambertian_escape`.
    """
    p = lambertian_escape(n_chip, n_ambient, dim) if escape is None else escape
    up = isotropic_transmittance(alpha_per_um * depth, dim)
    if not np.isfinite(thickness) or back_reflectivity == 0:
        return 0.5 * up * p
    back = isotropic_transmittance(alpha_per_um * (2 * thickness - depth), dim)
    first = 0.5 * up + 0.5 * back_reflectivity * back
    survive = round_trip(n_chip, n_ambient, alpha_per_um, thickness, back_reflectivity, dim)
    return first * p / (1 - (1 - p) * survive)


def weak_absorption_limit(n_chip, n_ambient, alpha_per_um, thickness, dim=3):
    """The multi-pass efficiency for R = 1 and alpha * w << 1 (see the module text)."""
    aw = alpha_per_um * thickness
    tc = critical_angle(n_chip, n_ambient)
    if dim == 3:
        return 1 / (1 + 4 * (n_chip / n_ambient) ** 2 * np.cos(tc) * aw)
    return 1 / (1 + 2 * (n_chip / n_ambient) * (np.pi / 2 - tc) * aw)
