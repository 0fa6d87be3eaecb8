"""Exact emitters in a flat multilayer: 2-D line currents and 3-D point dipoles.

The stack, bottom to top: the back side (open: the chip continues; a
perfect mirror; a metal or a substrate half-space of given complex index),
the emitting chip (index n + i kappa, thickness w or semi-infinite), thin
films listed from the chip outward, and the lossless ambient. The emitter
sits at depth d below the chip top (y = 0).

Method (the plane-wave, or angular-spectrum, expansion of the emitter's
field; the standard treatment of a dipole near planar interfaces, e.g.
Novotny & Hecht, "Principles of Nano-Optics", ch. 10, and Lukosz & Kunz,
JOSA 67, 1607 (1977); the 2-D forms and the cavity factors are derived
here). For each transverse wavenumber kappa and each polarisation
(s: E along z or normal to the plane of incidence; p: H so), psi is E_z (s)
or H_z (p); in every layer psi = a e^{i kz y} + b e^{-i kz y},
kz = sqrt(k^2 - kappa^2) with Im kz >= 0, and the flux carried upward by
the pair is Re(q)(|a|^2 - |b|^2) + 2 Im(q) Im(b a*), q = kz (s) or
kz / n^2 (p). Interfaces keep psi and q-weighted d psi / dy continuous,
which gives, for an interface between layer a (below) and b (above) that
already reflects Gamma_b:

    Gamma_a = [q_a (1 + G_b) - q_b (1 - G_b)] / [q_a (1 + G_b) + q_b (1 - G_b)]
    a_b / a_a = 2 q_a / [q_a (1 + G_b) + q_b (1 - G_b)]

(G_b = 0 gives the Fresnel coefficients; r_p is that of the magnetic field).
Looking up from the chip the stack reflects Gamma_up at y = 0; looking down
it reflects Gamma_down at y = -w (open 0; mirror -1 for s and +1 for p).
Referred to the emitter plane, Rt = Gamma_up e^{2 i kz d} and
Rb = Gamma_down e^{2 i kz (w - d)}. A source emitting u0 upward and
sigma u0 downward (sigma = +1 for a field part even in y, -1 for odd)
then sends U = u0 (1 + sigma Rb) / (1 - Rt Rb) upward and
D = u0 (sigma + Rt) / (1 - Rt Rb) downward, and meets its own returning
field rho = [sigma (Rt + Rb) + 2 Rt Rb] / (1 - Rt Rb) times its direct one.

Each orientation is a sum of parts (polarisation, sigma, amplitude A(kappa),
weight W(kappa)); W |A|^2 Re(q) is the bulk power per d kappa leaving the
source upward, normalised so that it integrates to 1/2 for a lossless chip:

    2-D out-of-plane (J along z): s, even, A = 1/kz,        W = 1/pi
    2-D parallel (J along x):     p, odd,  A = 1,           W = 2/(pi k0^2)
    2-D normal (J along y):       p, even, A = kappa/kz,    W = 2/(pi k0^2)
    3-D normal (vertical dipole): p, even, A = kappa/kz,    W = 3 kappa/(4 k0^2 k)
    3-D parallel (horizontal, azimuth-averaged):
                                  s, even, A = 1/kz,        W = 3 kappa/(8 k)
                                + p, odd,  A = 1,           W = 3 kappa/(8 k0^2 k)

(the 2-D weights count both signs of kx). A 3-D dipole along z of the
2-D convention ("out-of-plane") lies in the chip plane, so it equals
"parallel". Fractions of the bulk power of the same emitter:

    emitted = 1 + 2 Re  integral_0^inf  sum W A^2 q rho  d kappa
    top     = integral_0^{k_ambient}  sum W |A T|^2 Re(q_ambient) d kappa,
              T = tau_up e^{i kz d} (1 + sigma Rb) / (1 - Rt Rb)
    bottom  = the same with the transmitted downward wave, into an open or
              substrate back (nothing passes a mirror or a metal)

The emission integrand is analytic; guided modes of lossless stacks are
poles on the real kappa axis (they sit just above it once any loss is
added), so the integral runs along a path below the real axis (down the
imaginary axis, then parallel to the real one), which passes every pole
and branch point on the correct side. The power launched into guided modes
(``sides``) is computed on its own from the residues at those poles,
-2 pi Im Res(sum W A^2 q rho), so that emitted = top + bottom + sides is a
genuine check (``balance_error``) for lossless stacks. Where anything is
lossy, guided light is eventually absorbed in an infinite stack:
sides = 0 and absorbed = emitted - top - bottom.

For an emitter inside an absorbing chip the direct bulk term is taken as
that of the lossless chip (the same normalisation as the FDTD's); the
error is of the order of the absorption over the emitter's flux contour,
alpha * contour, negligible for chips that emit usefully.
"""

import math
from dataclasses import dataclass

import numpy as np

from .quadrature import gauss as _gauss
from .quadrature import gauss_sqrt_ends as _gauss_sqrt_ends

BACKS = ("open", "mirror", "metal", "substrate")

_PARTS = {
    2: {"out-of-plane": (("s", 1),), "parallel": (("p", -1),), "normal": (("p", 1),)},
    3: {"out-of-plane": (("s", 1), ("p", -1)), "parallel": (("s", 1), ("p", -1)), "normal": (("p", 1),)},
}


@dataclass(frozen=True)
class Stack:
    """A flat stack at one wavelength; indices complex (n + i kappa, kappa >= 0).

    Parameters
    ----------
    ambient : float
        Real index of the ambient.
    films : tuple of (complex, float)
        (index, thickness in µm) of each film, from the chip outward.
    chip : complex
        Index of the emitting chip.
    thickness : float
        Chip thickness, µm (``math.inf`` for a half-space).
    back : {"open", "mirror", "metal", "substrate"}
    back_index : complex or None
        Index of the metal or substrate half-space below the chip.
    """

    ambient: float
    films: tuple
    chip: complex
    thickness: float
    back: str = "open"
    back_index: complex | None = None

    @property
    def lossless(self):
        materials = [self.chip] + [n for n, _ in self.films]
        if self.back == "substrate":
            materials.append(self.back_index)
        return all(complex(n).imag == 0 for n in materials) and self.back != "metal"


def complex_index(index, alpha_per_um, wavelength):
    """n + i kappa from the intensity attenuation coefficient: kappa = alpha lambda / (4 pi)."""
    return complex(index, alpha_per_um * wavelength / (4 * np.pi))


def _kz(n, k0, kappa):
    kz = np.sqrt((complex(n) * k0) ** 2 - kappa ** 2 + 0j)
    return np.where(kz.imag < 0, -kz, kz)


def _q(pol, n, kz):
    return kz if pol == "s" else kz / complex(n) ** 2


def _up(stack, pol, k0, kappa, q_chip):
    """Gamma_up at y = 0 (chip side) and tau_up: the ambient amplitude per unit upgoing chip amplitude."""
    gamma = np.zeros_like(kappa, dtype=complex)
    q_above = _q(pol, stack.ambient, _kz(stack.ambient, k0, kappa))
    tau = np.ones_like(kappa, dtype=complex)
    for n, t in reversed(stack.films):
        kz = _kz(n, k0, kappa)
        q = _q(pol, n, kz)
        den = q * (1 + gamma) + q_above * (1 - gamma)
        tau = tau * 2 * q / den
        gamma = (q * (1 + gamma) - q_above * (1 - gamma)) / den
        phase = np.exp(1j * kz * t)
        gamma, tau, q_above = gamma * phase ** 2, tau * phase, q
    den = q_chip * (1 + gamma) + q_above * (1 - gamma)
    return (q_chip * (1 + gamma) - q_above * (1 - gamma)) / den, tau * 2 * q_chip / den


def _down(stack, pol, k0, kappa, q_chip):
    """Gamma_down at y = -w (chip side), and (t, q) of the back medium (None where nothing passes)."""
    if stack.back == "open":
        return np.zeros_like(kappa, dtype=complex), None
    if stack.back == "mirror":
        return np.full_like(kappa, -1.0 if pol == "s" else 1.0, dtype=complex), None
    q_back = _q(pol, stack.back_index, _kz(stack.back_index, k0, kappa))
    gamma = (q_chip - q_back) / (q_chip + q_back)
    passes = (2 * q_chip / (q_chip + q_back), q_back) if stack.back == "substrate" else None
    return gamma, passes


def response(stack, pol, wavelength, theta):
    """Power reflection and transmission of the stack's two sides for plane waves inside the chip.

    Parameters
    ----------
    pol : {"s", "p"}
    theta : array
        Angle from the normal inside the (lossless) chip, rad.

    Returns
    -------
    dict
        ``R_up``, ``T_up``: reflectance of the top (films and ambient) for a
        wave going up, and the power transmitted into the ambient;
        ``R_down``: reflectance of the back side for a wave going down.
    """
    k0 = 2 * np.pi / wavelength
    kappa = (complex(stack.chip).real * k0 * np.sin(np.asarray(theta, dtype=float))).astype(complex)
    kz = _kz(stack.chip, k0, kappa)
    q = _q(pol, stack.chip, kz)
    gamma_up, tau = _up(stack, pol, k0, kappa, q)
    gamma_down, _ = _down(stack, pol, k0, kappa, q)
    q_amb = _q(pol, stack.ambient, _kz(stack.ambient, k0, kappa))
    flux_in = np.real(q)
    transmitted = np.abs(tau) ** 2 * np.real(q_amb)
    T_up = np.divide(transmitted, flux_in, out=np.zeros_like(flux_in), where=flux_in > 0)  # 0 at grazing
    return {"R_up": np.abs(gamma_up) ** 2, "T_up": T_up, "R_down": np.abs(gamma_down) ** 2}


def _cavity(stack, pol, sigma, k0, kappa, depth):
    """Everything one part needs at the transverse wavenumbers ``kappa``."""
    kz = _kz(stack.chip, k0, kappa)
    q = _q(pol, stack.chip, kz)
    gamma_up, tau_up = _up(stack, pol, k0, kappa, q)
    gamma_down, passes = _down(stack, pol, k0, kappa, q)
    rt = gamma_up * np.exp(2j * kz * depth)
    below = stack.thickness - depth
    rb = gamma_down * np.exp(2j * kz * below) if math.isfinite(below) else np.zeros_like(rt)
    den = 1 - rt * rb
    return {
        "kz": kz, "q": q,
        "rho": (sigma * (rt + rb) + 2 * rt * rb) / den,
        "T": tau_up * np.exp(1j * kz * depth) * (1 + sigma * rb) / den,
        "D": (sigma + rt) / den,
        "passes": passes, "below": below,
    }


def _amplitude_weight(dim, pol, sigma, k0, k_ref, kappa, kz):
    """Source amplitude A and weight W of one part (see the module text)."""
    if dim == 2:
        if pol == "s":
            return 1 / kz, np.full_like(kappa, 1 / np.pi)
        return (np.ones_like(kz) if sigma < 0 else kappa / kz), np.full_like(kappa, 2 / (np.pi * k0 ** 2))
    if pol == "s":
        return 1 / kz, 3 * kappa / (8 * k_ref)
    if sigma < 0:
        return np.ones_like(kz), 3 * kappa / (8 * k0 ** 2 * k_ref)
    return kappa / kz, 3 * kappa / (4 * k0 ** 2 * k_ref)


def _real_k(stack, k0):
    """Real parts of the layer wavenumbers: chip and films (where guided light can live)."""
    return [complex(stack.chip).real * k0] + [complex(n).real * k0 for n, _ in stack.films]


def _fringes(stack, wavelength, depth=0.0):
    """Optical path in wavelengths of the finite layers and of the emitter's depth (there and back):
    how many oscillations the integrands go through."""
    w = stack.thickness if math.isfinite(stack.thickness) else depth
    return 2 * (complex(stack.chip).real * w + sum(complex(n).real * t for n, t in stack.films)) / wavelength


def _emission_path(stack, k0, depth, wavelength):
    """Nodes and weights of the path 0 -> -i b -> kappa_max - i b below the real axis."""
    k_hi = max(_real_k(stack, k0) + [stack.ambient * k0])
    if stack.back in ("metal", "substrate"):
        eps_b, eps_c = complex(stack.back_index) ** 2, complex(stack.chip) ** 2
        k_hi = max(k_hi, abs(stack.back_index) * k0)
        if stack.back == "metal" and abs(eps_b + eps_c) > 1e-3:
            k_hi = max(k_hi, min(abs(k0 * np.sqrt(eps_b * eps_c / (eps_b + eps_c))), 20 * k_hi))
    nearest = min(depth, stack.thickness - depth) if stack.back != "open" else depth
    tail = k_hi * 1.2 + 20.0 / nearest
    b = 0.2 * k0
    fr = _fringes(stack, wavelength, depth)
    z1, w1 = _gauss(0.0, -1j * b, 2)
    z2, w2 = _gauss(-1j * b, 1.2 * k_hi - 1j * b, 8 + int(fr / 4))
    z3, w3 = _gauss(1.2 * k_hi - 1j * b, tail - 1j * b, 6)
    return np.concatenate([z1, z2, z3]), np.concatenate([w1, w2, w3])


def _real_interval(a, b, breaks, fr):
    """Real nodes on [a, b], split at interior branch points ``breaks``."""
    cuts = sorted({a, b, *[x for x in breaks if a < x < b]})
    nodes, weights = [], []
    for lo, hi in zip(cuts, cuts[1:]):
        z, w = _gauss_sqrt_ends(lo, hi, 2 + int(fr / 8))
        nodes.append(z)
        weights.append(w)
    return np.concatenate(nodes), np.concatenate(weights)


def _guided(stack, parts, dim, k0, k_ref, depth, k_radiating):
    """Power into guided modes (lossless stacks): residues at the real poles of the emission integrand.

    Returns the power (fraction of the bulk power) and the modes' effective indices by polarisation.
    """
    from scipy import optimize  # here, not at the top: a third of a second of every start-up

    lo, hi = k_radiating, max(_real_k(stack, k0))
    modes = {pol: [] for pol, _ in parts}
    if hi <= lo * (1 + 1e-12):
        return 0.0, modes
    span = hi - lo
    count = int(2000 + 400 * _fringes(stack, 2 * np.pi / k0, depth))
    x = (lo + span * (1 - np.cos(np.linspace(0, np.pi, count))) / 2)[1:-1]
    power = 0.0
    for pol, sigma in parts:
        def g(kappa, pol=pol, sigma=sigma):
            kappa = np.atleast_1d(np.asarray(kappa, dtype=complex))
            with np.errstate(divide="ignore", invalid="ignore"):
                c = _cavity(stack, pol, sigma, k0, kappa, depth)
                a, w = _amplitude_weight(dim, pol, sigma, k0, k_ref, kappa, c["kz"])
                return w * a ** 2 * c["q"] * c["rho"]

        def inverse(kappa):
            with np.errstate(divide="ignore", invalid="ignore"):
                value = np.imag(1 / g(kappa)[0])
            return float(value) if np.isfinite(value) else 0.0

        h = np.imag(g(x))
        # Im g changes sign through infinity at a pole and through zero elsewhere; Im(1/g) is zero
        # at both, but only at a pole does the whole of 1/g vanish.
        for i in np.nonzero(np.sign(h[:-1]) * np.sign(h[1:]) < 0)[0]:
            try:
                pole = optimize.brentq(inverse, x[i], x[i + 1], xtol=1e-15 * hi, rtol=1e-15)
            except ValueError:
                continue
            step = 1e-7 * span
            with np.errstate(divide="ignore", invalid="ignore"):
                # 1/g vanishes linearly through a pole: a hundred times the step, a hundred times
                # the value. Where Im g only crosses zero, 1/g stays near 1/Re g. (Sampled beside
                # the pole: at the pole itself rounding can leave 0/0.)
                right, left = 1 / g(pole + step)[0], 1 / g(pole - step)[0]
                far = abs(1 / g(pole + 100 * step)[0]) + abs(1 / g(pole - 100 * step)[0])
            if not abs(right) + abs(left) < 0.05 * far:
                continue
            residue = 2 * step / (right - left)
            if np.isfinite(residue):
                power += -2 * np.pi * float(np.imag(residue))
                modes[pol].append(pole / k0)
    return power, modes


def emitter(stack, depth, wavelength, orientation, dim=2, angles=None, modes=False):
    """Exact budget of one emitter orientation in a flat stack.

    Parameters
    ----------
    stack : Stack
    depth : float
        Emitter depth below the chip top, µm (0 < depth < thickness).
    wavelength : float
        Vacuum wavelength, µm.
    orientation : {"parallel", "normal", "out-of-plane"}
        Direction of the current (2-D) or the dipole (3-D).
    dim : {2, 3}
        2: line current along z; 3: point dipole.
    angles : array, optional
        Angles in the ambient from the surface normal, degrees (0 to 90),
        at which to return the escaped intensity.
    modes : bool
        Find the guided modes of a lossless stack and the power launched into
        them from the residues at their poles (an independent check of the
        budget, reported as ``balance_error``; costs about 25 times more).
        Without it, ``sides`` of a lossless stack is emitted - top - bottom.

    Returns
    -------
    dict
        ``emission`` (emitted / bulk power of the same emitter in lossless
        chip material), and as fractions of the emitted power: ``efficiency``
        (= top), ``budget`` {top, bottom, sides, absorbed}; ``balance_error``
        (lossless stacks with ``modes``, else None); ``guided_modes`` (with
        ``modes``: {"s": [...], "p": [...]}, effective indices of the guided
        modes that the emitter excites, by polarisation); with ``angles``,
        ``intensity``: escaped power per degree of ambient angle, per unit
        emitted power (2-D: per signed angle, so both sides of the normal add
        up to the top fraction; 3-D: per degree of polar angle, summed over
        azimuth).
    """
    parts = _PARTS[dim][orientation]
    k0 = 2 * np.pi / wavelength
    k_ref = complex(stack.chip).real * k0
    k_amb = stack.ambient * k0
    fr = _fringes(stack, wavelength, depth)

    z, wz = _emission_path(stack, k0, depth, wavelength)
    breaks = [abs(complex(stack.chip)) * k0]
    if stack.back in ("metal", "substrate"):
        breaks.append(complex(stack.back_index).real * k0)
    xt, wt = _real_interval(0.0, k_amb, breaks, fr)
    emission, top, bottom = 1.0, 0.0, 0.0
    spectrum = 0.0
    k_radiating = k_amb
    if stack.back == "open":
        k_radiating = max(k_radiating, complex(stack.chip).real * k0)
    elif stack.back == "substrate":
        k_radiating = max(k_radiating, complex(stack.back_index).real * k0)
    for pol, sigma in parts:
        c = _cavity(stack, pol, sigma, k0, z, depth)
        a, w = _amplitude_weight(dim, pol, sigma, k0, k_ref, z, c["kz"])
        emission += 2 * float(np.real(np.sum(wz * w * a ** 2 * c["q"] * c["rho"])))

        top += float(np.sum(wt * _escaping(stack, pol, sigma, dim, k0, k_ref, xt, depth)))
        if angles is not None:
            # Grazing carries nothing (cos = 0); evaluated 1e-4 degree inside, not at 0/0 (sin(90 - 1e-9 degrees) is 1).
            degrees = np.asarray(angles, dtype=float)
            theta = np.radians(np.minimum(degrees, 90 - 1e-4))
            per_rad = _escaping(stack, pol, sigma, dim, k0, k_ref, k_amb * np.sin(theta), depth) * k_amb * np.cos(theta)
            per_rad = np.where(np.abs(degrees) >= 90, 0.0, per_rad)
            spectrum = spectrum + per_rad * np.pi / 180 / (2 if dim == 2 else 1)
        bottom += _bottom(stack, pol, sigma, dim, k0, k_ref, depth, fr)

    sides = 0.0
    found, balance = {}, None
    if stack.lossless and modes:
        sides, found = _guided(stack, parts, dim, k0, k_ref, depth, k_radiating)
        absorbed = 0.0
        balance = abs(emission - top - bottom - sides) / emission
    elif stack.lossless:
        sides, absorbed = emission - top - bottom, 0.0
    else:
        absorbed = emission - top - bottom
    result = {
        "emission": emission,
        "efficiency": top / emission,
        "budget": {"top": top / emission, "bottom": bottom / emission, "sides": sides / emission,
                   "absorbed": absorbed / emission},
        "balance_error": balance,
        "guided_modes": found,
    }
    if angles is not None:
        result["intensity"] = np.asarray(spectrum) / emission
    return result


def _escaping(stack, pol, sigma, dim, k0, k_ref, kappa, depth):
    """Escaped power per d kappa (fraction of the bulk power) at real kappa below the ambient's k."""
    kappa = np.asarray(kappa, dtype=float)
    c = _cavity(stack, pol, sigma, k0, kappa.astype(complex), depth)
    a, w = _amplitude_weight(dim, pol, sigma, k0, k_ref, kappa, c["kz"])
    q_amb = _q(pol, stack.ambient, _kz(stack.ambient, k0, kappa))
    return w * np.abs(a * c["T"]) ** 2 * np.real(q_amb)


def _bottom(stack, pol, sigma, dim, k0, k_ref, depth, fr):
    """Power through the back side: into an open chip below, or into a substrate."""
    if stack.back in ("mirror", "metal"):
        return 0.0
    if stack.back == "open":
        if not math.isfinite(stack.thickness) and complex(stack.chip).imag > 0:
            return 0.0  # an absorbing half-space swallows all downward light
        kb = complex(stack.chip).real * k0
        lossy = complex(stack.chip).imag > 0
        upper = kb if not lossy else kb * 1.2 + 20.0 / max(stack.thickness - depth, 1e-9)
    else:
        kb = upper = complex(stack.back_index).real * k0
    x, w_x = _real_interval(0.0, upper, [kb, stack.ambient * k0], fr)
    c = _cavity(stack, pol, sigma, k0, x.astype(complex), depth)
    a, w = _amplitude_weight(dim, pol, sigma, k0, k_ref, x, c["kz"])
    amplitude = a * c["D"]
    if math.isfinite(c["below"]):
        amplitude = amplitude * np.exp(1j * c["kz"] * c["below"])
    if stack.back == "substrate":
        t_b, q_b = c["passes"]
        amplitude = amplitude * t_b
    else:
        q_b = c["q"]
    return float(np.sum(w_x * np.real(w * np.abs(amplitude) ** 2 * np.real(q_b))))
