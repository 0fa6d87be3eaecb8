"""Multi-pass model of a thick chip over angle bins: the top's response as matrices, powers summed.

A chip much thicker than the coherence length of its light is incoherent between passes: powers add.
Light inside it is described by its power per angle bin, the bins being equal intervals of
u = sin(theta) = kx / (n k0) across -1..1 (theta from the normal inside the chip, in the x-y plane of
the 2-D problem). Equal intervals of u are the natural bins in 2-D: randomised (Lambertian) light,
whose power per radian goes as cos(theta), has equal power per interval of u, and a periodic texture
shifts u by whole multiples of lambda / (n period). The same idea as the matrix formalism of textured
solar cells (Tucher et al., Optics Express 23, A1720 (2015)); the notation here is our own.

The top is three arrays per polarisation and wavelength, for light arriving from inside in bin i:
``reflect[j, i]``, the fraction sent back down in bin j; ``transmit[i]``, the fraction escaping;
``farfield[a, i]``, the escaping fraction per ambient degree bin a. The back side is flat: it keeps
the bin (specular) with the reflectance R_b(theta) of a mirror (1), a metal or a substrate (Fresnel,
:func:`references.multilayer.response`), or 0 for an open back (the chip runs on). One crossing of
the chip attenuates by exp(-alpha w / cos theta).

With s0 the power of first arrivals at the top per bin (the emitter's light going up, attenuated over
the depth d, plus its light going down, attenuated over w - d, reflected at the back and attenuated
over w) and the round trip S_i = R_b e^{-2 alpha w / cos theta} (both averaged over the bin, uniformly
in u), the arrivals at the top over all passes x solve

    x = s0 + diag(S) R x,        x = (1 - diag(S) R)^-1 s0,

the escaped fraction is transmit . x and the far field farfield @ x. Light that leaves the top
downward, R x, reaches the back attenuated, plus the emitter's first downward light; the back keeps
R_b of it and lets 1 - R_b escape (open, substrate) or absorbs it (metal). What is left is absorbed
in the chip. Without any loss (alpha = 0, a perfect mirror, light trapped by total internal
reflection) the system is singular: the passes are then summed one by one and what stays in the chip
after ``MAX_PASSES`` is reported as trapped.

Flat chip on a flat back, closed form (derived here; checks the bins). With the emitter's pattern per
radian p(theta) over the full circle (:func:`references.planar.pattern`, symmetric up and down), the
top's Fresnel reflectance R(theta) and transmittance T(theta), and a = e^{-alpha / cos theta}, the
light emitted up at theta arrives with a^d, the light emitted down at the mirror angle with
R_b a^{2w - d}; each arrival escapes with T and returns with R R_b a^{2w}, a geometric series:

    eta = integral_{-pi/2}^{pi/2} p(theta) T (a^d + R_b a^{2w-d}) / (1 - R R_b a^{2w}) dtheta
"""

import math

import numpy as np

from fdtd_cases.angle_bins import bin_edges, far_edges, spread

from . import planar

MAX_PASSES = 100000
"""Passes summed one by one for a lossless (singular) chip, and at most counted for ``passes_99``."""
NODES_PER_BIN = 48
"""Gauss-Legendre nodes per bin (in theta) for the emitter's light and the bin averages."""
_GAUSS = np.polynomial.legendre.leggauss(NODES_PER_BIN)


def bin_nodes(count):
    """(theta nodes (count, NODES_PER_BIN), weights in theta): Gauss-Legendre in theta over each bin."""
    x, w = _GAUSS
    edges = np.arcsin(bin_edges(count))
    lo, hi = edges[:-1, None], edges[1:, None]
    return (lo + hi) / 2 + (hi - lo) / 2 * x, (hi - lo) / 2 * w


def bin_average(values_of_theta, count):
    """Average of f(theta) over each bin, uniformly in u (weight cos theta dtheta)."""
    theta, w = bin_nodes(count)
    weight = w * np.cos(theta)
    return np.sum(values_of_theta(theta) * weight, axis=1) / np.sum(weight, axis=1)


def attenuation(alpha_per_um, length, theta):
    """e^{-alpha L / cos theta} (1 where alpha L is 0; 0 for an infinite path in an absorbing chip)."""
    if alpha_per_um == 0:
        return np.ones_like(theta)
    if math.isinf(length):
        return np.zeros_like(theta)
    return np.exp(-alpha_per_um * length / np.maximum(np.cos(theta), 1e-300))


def _farfield_column(s_lo, s_hi, power):
    """Power escaping over ambient sin(angle) in [s_lo, s_hi], per one-degree bin."""
    edges = np.sin(np.radians(far_edges()))
    return power * spread(s_lo, s_hi, edges)


def flat_top(top_reflectance, top_transmittance, count, n_chip, n_ambient):
    """The top's arrays for a flat top from its reflectance and transmittance as functions of theta
    (bin averages, uniformly in u; specular, so ``reflect`` is diagonal)."""
    edges = bin_edges(count)
    R = bin_average(top_reflectance, count)
    T = bin_average(top_transmittance, count)
    far = np.zeros((len(far_edges()) - 1, count))
    for i in range(count):
        far[:, i] = _farfield_column(edges[i] * n_chip / n_ambient, edges[i + 1] * n_chip / n_ambient, T[i])
    return {"reflect": np.diag(R), "transmit": T, "farfield": far}


def lambertian_top(count, n_chip, n_ambient):
    """The ideal randomising top (:func:`references.closed_forms.multipass`): every arrival escapes
    with p = n_ambient / n_chip, the rest goes down Lambertian (uniform in u) outside the escape cone."""
    p = min(1.0, n_ambient / n_chip)
    edges = bin_edges(count)
    outside = np.clip(np.minimum(edges[1:], -p) - edges[:-1], 0, None) + np.clip(edges[1:] - np.maximum(edges[:-1], p), 0, None)
    down = outside / outside.sum() * (1 - p) if outside.sum() > 0 else np.zeros(count)
    far = np.zeros((len(far_edges()) - 1, count))
    column = _farfield_column(-1.0, 1.0, p)  # Lambertian in the ambient: uniform in sin(angle)
    far[:] = column[:, None]
    return {"reflect": np.repeat(down[:, None], count, axis=1), "transmit": np.full(count, p), "farfield": far}


def emitter_light(orientation, count, alpha_per_um, depth, thickness, back_reflectance):
    """(first arrivals at the top per bin, first arrivals at the back per bin) of the emitter's light.

    ``back_reflectance``: R_b as a function of theta (vectorised)."""
    theta, w = bin_nodes(count)
    p = planar.pattern(orientation, theta) * w
    below = thickness - depth
    to_back = p * attenuation(alpha_per_um, below, theta)
    up = p * attenuation(alpha_per_um, depth, theta)
    if math.isfinite(thickness):
        up = up + to_back * back_reflectance(theta) * attenuation(alpha_per_um, thickness, theta)
    return up.sum(axis=1), to_back.sum(axis=1)


def solve(top, s0, d0, crossing, round_trip, back_reflect, back_kind):
    """Sum the passes (see the module text).

    Parameters
    ----------
    top : dict
        ``reflect``, ``transmit``, ``farfield`` of the top.
    s0, d0 : arrays
        First arrivals at the top and at the back, per bin.
    crossing, round_trip, back_reflect : arrays
        Per bin: one crossing's attenuation, the round trip S, the back's reflectance (bin averages).
    back_kind : {"open", "mirror", "metal", "substrate"}

    Returns
    -------
    dict
        ``efficiency``, ``budget`` (top, back, absorbed_chip, absorbed_metal, absorbed_top, trapped),
        ``farfield`` (power per ambient degree), ``passes_99``, ``arrivals`` (x).
    """
    R, T = top["reflect"], top["transmit"]
    M = round_trip[:, None] * R
    loss = 1.0 - M.sum(axis=0)  # per incident bin: what one round trip loses
    trapped = 0.0
    if np.min(loss) > 1e-12:
        x = np.linalg.solve(np.eye(len(s0)) - M, s0)
    else:  # no loss at all for some light: sum the passes and keep what stays
        x, v = np.zeros_like(s0), s0.copy()
        for _ in range(MAX_PASSES):
            x += v
            v = M @ v
            if v.sum() < 1e-13:
                break
        trapped = float(v.sum())
    escaped = float(T @ x)
    down = R @ x
    at_back = crossing * down + d0
    leaving_back = float(np.sum((1 - back_reflect) * at_back))
    absorbed_top = float(np.sum((1 - R.sum(axis=0) - T) * x))
    budget = {"top": escaped, "back": leaving_back if back_kind in ("open", "substrate") else 0.0,
              "absorbed_metal": leaving_back if back_kind == "metal" else 0.0, "absorbed_top": absorbed_top,
              "trapped": trapped}
    emitted = 1.0
    budget["absorbed_chip"] = max(0.0, emitted - sum(budget.values()))
    return {"efficiency": escaped, "budget": budget, "farfield": top["farfield"] @ x,
            "passes_99": passes_for(M, T, s0, escaped), "arrivals": x}


def passes_for(M, T, s0, escaped, share=0.99):
    """The number of arrivals at the top (passes) that carry ``share`` of the escaped light."""
    if escaped <= 0:
        return 0
    total, v = 0.0, s0.copy()
    for k in range(1, MAX_PASSES + 1):
        total += float(T @ v)
        if total >= share * escaped:
            return k
        v = M @ v
    return MAX_PASSES


def flat_closed_form(orientation, top_reflectance, top_transmittance, alpha_per_um, depth, thickness,
                     back_reflectance):
    """The flat chip's closed form (module text), by adaptive quadrature over theta."""
    from scipy import integrate  # here: the model itself needs only numpy

    def integrand(theta):
        a = lambda length: float(attenuation(alpha_per_um, length, np.array(theta)))  # noqa: E731
        Rb = float(back_reflectance(np.array(theta))) if math.isfinite(thickness) else 0.0
        first = a(depth) + (Rb * a(2 * thickness - depth) if Rb > 0 else 0.0)
        again = float(top_reflectance(np.array(theta))) * Rb * (a(2 * thickness) if Rb > 0 else 0.0)
        return float(planar.pattern(orientation, theta)) * float(top_transmittance(np.array(theta))) * first / (1 - again)

    return integrate.quad(integrand, -np.pi / 2, np.pi / 2, limit=400, epsabs=1e-12, epsrel=1e-10)[0]


def ray_optics_top(scene, count, pol, rays_per_bin=4000, seed=0):
    """The top's arrays in ray optics (references.raytrace), bin by bin like Meep's: for each bin,
    ``rays_per_bin`` rays at the bin's centre direction start just below the texture at positions
    spread evenly over one period (``scene``: periodic sides); rays that come back below the texture
    are reflected light (binned by their direction), rays that escape are the far field. Lets the
    multi-pass model run on ray optics with the same bins, to tell the bins' own error from wave
    effects. ``scene``: a periodic scene whose back is an open line just below the texture and whose
    chip does not absorb."""
    from .raytrace import trace

    rng = np.random.default_rng(seed)
    edges, far = bin_edges(count), np.sin(np.radians(far_edges()))
    centres = (edges[:-1] + edges[1:]) / 2
    reflect, transmit = np.zeros((count, count)), np.zeros(count)
    farfield = np.zeros((len(far) - 1, count))
    x = scene.period * ((np.arange(rays_per_bin) + 0.5) / rays_per_bin - 0.5)
    pos = np.column_stack([x, np.full(rays_per_bin, scene.y_back + 1e-6)])
    for i, u in enumerate(centres):
        d = np.column_stack([np.full(rays_per_bin, u), np.full(rays_per_bin, math.sqrt(1 - u * u))])
        r = trace(scene, pos, d, pol, rng=rng, angles_out=True)
        back = np.isfinite(r["down"])
        reflect[:, i] = np.histogram(r["down"][back], bins=edges, weights=r["bottom"][back])[0] / rays_per_bin
        out = np.isfinite(r["angle"])
        s = np.sin(np.radians(r["angle"][out]))
        farfield[:, i] = np.histogram(s, bins=far, weights=r["top"][out])[0] / rays_per_bin
        transmit[i] = r["top"].sum() / rays_per_bin
    return {"reflect": reflect, "transmit": transmit, "farfield": farfield}
