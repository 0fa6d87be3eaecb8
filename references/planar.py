"""Exact 2-D line emitter below a flat interface (open back: a half-space).

A line current at depth ``d`` below a flat interface between the chip (index
n1, y < 0) and the ambient (index n2 > 0, lossless both), expanded in plane
waves (angular spectrum, Weyl-type expansion of the 2-D Green's function
(i/4) H0(k r)). With theta the angle from the surface normal inside the chip
(kx = k1 sin theta, dkx / kz = dtheta) the derivation below follows the
standard treatment of a dipole near a planar interface (e.g. Novotny & Hecht,
"Principles of Nano-Optics", ch. 10, done there in 3-D); the 2-D forms are
derived here.

Bulk pattern (radiant power per radian, normalised to 1 over the full circle):
``out-of-plane`` (current along z, s-polarised, E along z) 1/(2 pi);
``parallel`` (current along x, p-polarised) cos^2(theta) / pi;
``normal`` (current along y, p-polarised) sin^2(theta) / pi.

Power escaping into the ambient, as a fraction of the bulk power P0:
    top = 2 * integral_0^theta_c pattern(theta) T(theta) dtheta
with T = 1 - |r|^2 the power transmission of the interface.

Power emitted, as a fraction of P0 (the reflected wave returning to the
emitter interferes with it; Im G at the source):
    out-of-plane: 1 + (2/pi) Re int_0^{pi/2} r_s e^{2 i k1 d cos} dtheta
    parallel:     1 + (4/pi) Re int_0^{pi/2} (-r_p) cos^2 e^{2 i k1 d cos} dtheta
    normal:       1 + (4/pi) Re int_0^{pi/2} (+r_p) sin^2 e^{2 i k1 d cos} dtheta
where r_p is the reflection coefficient of the magnetic field H_z (the x
component of E changes sign on reflection, the y component does not). The
evanescent part of the spectrum (kx > k1) adds nothing for lossless media:
there r and kz/i are real, so the integrand is purely imaginary.

Power going down (the open back), independently from the flux of the direct
plus reflected downward waves:
    bottom = 2 * int_0^{pi/2} pattern(theta) |1 + rho e^{2 i k1 d cos}|^2 dtheta
with rho = r_s, -r_p, +r_p for the three orientations. top + bottom equals
the emitted power identically (a test checks the two routes agree).
Extraction efficiency = top / emitted.
"""

import numpy as np



def critical_angle(n_chip, n_ambient):
    """Escape-cone half-angle inside the chip, rad (pi/2 when n_ambient >= n_chip)."""
    return float(np.arcsin(min(1.0, n_ambient / n_chip)))


def fresnel(n1, n2, theta1):
    """Fresnel coefficients for light in medium n1 meeting medium n2.

    Parameters
    ----------
    n1, n2 : float
        Real refractive indices of the incident and transmitting media.
    theta1 : float or array
        Angle of incidence from the normal, rad.

    Returns
    -------
    r_s, r_p : complex arrays
        Amplitude reflection coefficients: r_s of the electric field (s,
        E normal to the plane of incidence), r_p of the magnetic field (p);
        r_p = -r_s at normal incidence. |r| = 1 beyond the critical angle.
    T_s, T_p : float arrays
        Power transmission, 1 - |r|^2 (0 beyond the critical angle).
    """
    theta1 = np.asarray(theta1, dtype=float)
    c1 = np.cos(theta1)
    c2 = np.sqrt((1 - (n1 / n2) ** 2 * np.sin(theta1) ** 2).astype(complex))
    c2 = np.where(c2.imag < 0, -c2, c2)  # decaying into medium 2 beyond the critical angle
    r_s = (n1 * c1 - n2 * c2) / (n1 * c1 + n2 * c2)
    r_p = (n2 * c1 - n1 * c2) / (n2 * c1 + n1 * c2)
    return r_s, r_p, 1 - np.abs(r_s) ** 2, 1 - np.abs(r_p) ** 2


def pattern(orientation, theta):
    """Bulk radiant power per radian of a 2-D line emitter, integrating to 1 over 2 pi."""
    theta = np.asarray(theta, dtype=float)
    if orientation == "out-of-plane":
        return np.full_like(theta, 1 / (2 * np.pi))
    if orientation == "parallel":
        return np.cos(theta) ** 2 / np.pi
    if orientation == "normal":
        return np.sin(theta) ** 2 / np.pi
    raise ValueError(f"unknown orientation {orientation!r}")


def _reflection(orientation, n_chip, n_ambient, theta, ideal_cone=False):
    """(rho, T): the reflection seen by the emitter's own polarisation, and the transmission."""
    r_s, r_p, T_s, T_p = fresnel(n_chip, n_ambient, theta)
    if orientation == "out-of-plane":
        rho, T = r_s, T_s
    else:
        rho, T = (-r_p if orientation == "parallel" else r_p), T_p
    if ideal_cone:
        inside = np.sin(theta) < n_ambient / n_chip
        rho, T = np.where(inside, 0.0, rho), np.where(inside, 1.0, T)
    return rho, T


def _quad(f, a, b):
    from scipy import integrate  # here, not at the top: scipy.integrate loads scipy.optimize (start-up time)

    if b <= a:
        return 0.0
    value, _ = integrate.quad(f, a, b, limit=800, epsabs=1e-12, epsrel=1e-10)
    return value


def half_space(n_chip, n_ambient, depth, wavelength, orientation, ideal_cone=False):
    """Exact budget of a line emitter below a flat chip surface, open back.

    Parameters
    ----------
    n_chip, n_ambient : float
        Real indices (lossless media).
    depth : float
        Emitter depth below the surface, µm (> 0).
    wavelength : float
        Vacuum wavelength, µm.
    orientation : {"parallel", "normal", "out-of-plane"}
    ideal_cone : bool
        Replace the interface inside the escape cone by a perfect transmitter
        (T = 1, r = 0; total internal reflection outside is kept): the case
        "without Fresnel losses" of the escape-cone closed forms.

    Returns
    -------
    dict
        ``efficiency`` (top / emitted), ``emission`` (emitted / bulk power),
        ``top`` and ``bottom`` (fractions of the bulk power), ``bottom_flux``
        (the downward flux computed independently; equals emission - top).
    """
    k1 = 2 * np.pi * n_chip / wavelength
    theta_c = critical_angle(n_chip, n_ambient)
    half_pi = np.pi / 2

    def rho(theta):
        return _reflection(orientation, n_chip, n_ambient, theta, ideal_cone)

    def phase(theta):
        return np.exp(2j * k1 * depth * np.cos(theta))

    def interference(theta):
        return pattern(orientation, theta) * np.real(rho(theta)[0] * phase(theta))

    def escaping(theta):
        return pattern(orientation, theta) * rho(theta)[1]

    def downward(theta):
        return pattern(orientation, theta) * np.abs(1 + rho(theta)[0] * phase(theta)) ** 2

    # The interference term: 2 * int pattern * Re(rho e) over both half-planes (theta in -pi/2..pi/2),
    # i.e. 4 * int_0^{pi/2}; pattern carries the 1/(2 pi) or 1/pi of the formulas in the module text.
    emission = 1 + 4 * (_quad(interference, 0, theta_c) + _quad(interference, theta_c, half_pi))
    top = 2 * _quad(escaping, 0, theta_c)
    bottom = 2 * (_quad(downward, 0, theta_c) + _quad(downward, theta_c, half_pi))
    return {"efficiency": top / emission, "emission": emission, "top": top, "bottom": emission - top,
            "bottom_flux": bottom}
