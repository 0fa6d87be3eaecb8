"""3-D Monte-Carlo ray tracing of point dipoles in the FDTD's z-invariant structure.

The scene is that of :mod:`references.raytrace` (the same surface polyline,
films, back side and lateral boundaries; every interface is a plane that
contains the z axis); rays now travel in 3-D. Because nothing varies along
z, a ray's position along z never matters: its (x, y) position moves by the
x and y components of its unit direction times the path length, so the 2-D
tracer's intersection code serves unchanged, and the path length (for
Beer-Lambert absorption) is the 3-D one.

- Emission: a point dipole along x (``parallel``), y (``normal``) or z
  (``out-of-plane``) sends power proportional to sin^2 of the angle from
  its axis (1 - (p.d)^2 per steradian), linearly polarised along the part of
  the dipole transverse to the ray, p - (p.d) d.
- Interfaces: the vector form of Snell's law (the normal has no z
  component, so the direction's z component is kept by reflection and
  scaled by n1/n2 by refraction); Fresnel coefficients (with the surface's
  thin films, :func:`references.multilayer.response`) of the local s and p
  components: the ray's field direction e is split into e.s and e.p (s
  normal to the plane of incidence), the branch (reflect or transmit) is
  drawn with its power share R = |e.s|^2 R_s + |e.p|^2 R_p (T likewise),
  and the new field direction has components sqrt(R_s) e.s and sqrt(R_p) e.p
  (or T) along the new s and p directions. Phases are not carried (total
  internal reflection turns linear into elliptical polarisation, which is
  ignored): common practice in incoherent ray tracing. Where every plane of
  incidence contains the same normal (a flat chip) s and p never mix and
  this is exact; a test checks it against the 3-D escape-cone closed form
  with Fresnel losses.
- Everything else (absorption, back side, lateral boundaries, weights,
  truncation) as in the 2-D tracer.

The escape angle of a ray is its polar angle from the surface normal,
binned per degree from 0 to 90 (``farfield``: per degree of polar angle,
summed over azimuth, the shape of a point source's FDTD polar pattern).
"""

import numpy as np

from . import raytrace
from .raytrace import EPS, lateral, next_event, run_jobs

AXES = {"parallel": (1.0, 0.0, 0.0), "normal": (0.0, 1.0, 0.0), "out-of-plane": (0.0, 0.0, 1.0)}
"""Dipole direction of each orientation (x across the pattern's lines, y the normal, z along the lines)."""


def sample_dipole(orientation, count, rng):
    """Directions (count, 3) drawn from a point dipole's bulk pattern and their field directions (count, 3)."""
    axis = np.array(AXES[orientation])
    out = np.empty((0, 3))
    while len(out) < count:
        v = rng.normal(size=(2 * (count - len(out)) + 16, 3))
        v /= np.linalg.norm(v, axis=1)[:, None]
        keep = rng.uniform(size=len(v)) < 1 - (v @ axis) ** 2
        out = np.concatenate([out, v[keep]])
    d = out[:count]
    e = axis[None, :] - (d @ axis)[:, None] * d
    return d, e / np.linalg.norm(e, axis=1)[:, None]


def _unit(v):
    return v / np.maximum(np.linalg.norm(v, axis=1), 1e-300)[:, None]


def _split(d, normal, e):
    """s direction (normal to the plane of incidence) and the field's s and p components."""
    s = np.cross(d, normal)
    small = np.linalg.norm(s, axis=1) < 1e-12   # normal incidence: any s will do
    s[small] = np.cross(e[small], d[small])
    s = _unit(s)
    p = np.cross(s, d)
    return s, np.sum(e * s, axis=1), np.sum(e * p, axis=1)


def _interact(d, normal, e, Rs, Rp, Ts, Tp, new_d, reflect):
    """The new field direction after an interaction; ``new_d`` the new direction."""
    s, es, ep = _split(d, normal, e)
    a_s = np.where(reflect, np.sqrt(Rs), np.sqrt(Ts)) * es
    a_p = np.where(reflect, np.sqrt(Rp), np.sqrt(Tp)) * ep
    p_new = np.cross(s, new_d)
    out = a_s[:, None] * s + a_p[:, None] * p_new
    norm = np.linalg.norm(out, axis=1)
    out = np.where(norm[:, None] > 1e-300, out / np.maximum(norm, 1e-300)[:, None], s)
    return out


def _shares(lookup, e_s, e_p, cos_i):
    Rs, Ts = lookup("s", cos_i)
    Rp, Tp = lookup("p", cos_i)
    Ts = np.zeros_like(Rs) if Ts is None else Ts
    Tp = np.zeros_like(Rp) if Tp is None else Tp
    fs, fp = e_s ** 2, e_p ** 2
    return Rs, Rp, Ts, Tp, fs * Rs + fp * Rp, fs * Ts + fp * Tp


def trace(scene, pos, d, e, rng=None, weight_floor=1e-4, max_events=10000):
    """Trace rays from ``pos`` (N, 2) in 3-D directions ``d`` (N, 3) with field directions ``e``.

    Returns per-ray weights ``top``, ``bottom``, ``sides``, ``absorbed``,
    ``truncated``, the interactions traced (``events``) and ``polar``, the
    polar angle of each escaped ray (degrees; NaN for the others).
    """
    n = len(pos)
    rng = rng if rng is not None else np.random.default_rng(0)
    tally = {k: np.zeros(n) for k in ("top", "bottom", "sides", "absorbed", "truncated")}
    polar = np.full(n, np.nan)
    edges = scene.segments[:, 1] - scene.segments[:, 0]
    normals = np.column_stack([-edges[:, 1], edges[:, 0], np.zeros(len(edges))])
    normals /= np.linalg.norm(normals, axis=1)[:, None]
    a = scene.segments[:, 0]
    geometry = (a[None, :, 0], a[None, :, 1], edges[None, :, 0], edges[None, :, 1])
    ids = np.arange(n)
    px, py = np.array(pos[:, 0], dtype=float), np.array(pos[:, 1], dtype=float)
    d, e = np.array(d, dtype=float), np.array(e, dtype=float)
    w = np.ones(n)
    chip = np.ones(n, dtype=bool)
    events = np.zeros(n, dtype=np.int64)
    total_events = 0
    edge = scene.x_side if scene.period is None else scene.period / 2
    y_normal = np.array([0.0, 1.0, 0.0])
    while len(ids):
        dx, dy = d[:, 0], d[:, 1]
        t, choice, seg = next_event(scene, px, py, dx, dy, chip, geometry, edge)
        stuck = ~np.isfinite(t)   # a ray along z alone never meets anything in the (x, y) plane
        t[stuck] = 0.0
        if scene.alpha > 0:
            w = w * np.where(chip, np.exp(-scene.alpha * t), 1.0)
            w[stuck & chip] = 0.0  # it travels along z in the chip for ever
        px, py = px + t * dx, py + t * dy
        done = stuck | ((choice == 1) & (scene.back == "open"))
        tally["bottom"][ids[done & ~stuck]] += w[done & ~stuck]
        tally["sides"][ids[stuck]] += w[stuck]

        esc = choice == 2
        tally["top"][ids[esc]] += w[esc]
        polar[ids[esc]] = np.degrees(np.arccos(np.clip(dy[esc], -1, 1)))
        done |= esc

        side = lateral(scene, choice, done, ids, w, px, dx, tally)

        back = np.nonzero((choice == 1) & ~done)[0]
        if len(back):
            mirrored = d[back] * np.array([1.0, -1.0, 1.0])
            if scene.back == "mirror":     # a perfect conductor reflects s and p wholly
                e[back] = _interact(d[back], np.tile(y_normal, (len(back), 1)), e[back], 1.0, 1.0, 0.0, 0.0,
                                    mirrored, np.ones(len(back), dtype=bool))
                d[back] = mirrored
            else:
                _, es, ep = _split(d[back], np.tile(y_normal, (len(back), 1)), e[back])
                Rs, Rp, Ts, Tp, R, T = _shares(scene.back_coefficients, es, ep, -dy[back])
                w[back] *= R + T
                reflect = rng.uniform(size=len(back)) * np.maximum(R + T, 1e-300) < R
                e[back] = _interact(d[back], np.tile(y_normal, (len(back), 1)), e[back], Rs, Rp, Ts, Tp,
                                    np.where(reflect[:, None], mirrored, d[back]), reflect)
                out = back[~reflect]
                tally["bottom"][ids[out]] += w[out]
                done[out] = True
                d[back[reflect]] = mirrored[reflect]

        hit = np.nonzero((choice == 0) & ~done)[0]
        if len(hit):
            normal = normals[seg[hit]]
            v = d[hit]
            dot = np.sum(v * normal, axis=1)
            cos_i = np.abs(dot)
            from_chip = chip[hit]
            _, es, ep = _split(v, normal, e[hit])
            parts = [np.empty(len(hit)) for _ in range(6)]
            for side_chip, lookup in ((True, scene.up), (False, scene.down)):
                m = from_chip == side_chip
                if m.any():
                    for part, value in zip(parts, _shares(lookup, es[m], ep[m], cos_i[m])):
                        part[m] = value
            Rs, Rp, Ts, Tp, R, T = parts
            share = np.clip(R + T, 0, 1)
            w[hit] *= share
            reflect = rng.uniform(size=len(hit)) * np.maximum(share, 1e-300) < R
            facing = -np.sign(dot)[:, None] * normal            # faces the incoming ray
            eta = np.where(from_chip, scene.n_chip / scene.n_ambient, scene.n_ambient / scene.n_chip)
            sin2 = eta ** 2 * (1 - cos_i ** 2)
            through = ~reflect & (sin2 < 1)
            k = np.where(through, eta * cos_i - np.sqrt(np.clip(1 - sin2, 0, None)), 2 * cos_i)
            scale = np.where(through, eta, 1.0)
            new = _unit(scale[:, None] * v + k[:, None] * facing)
            e[hit] = _interact(v, normal, e[hit], Rs, Rp, Ts, Tp, new, ~through)
            d[hit] = new
            chip[hit] = np.where(through, ~from_chip, from_chip)
            px[hit] += 10 * EPS * new[:, 0]
            py[hit] += 10 * EPS * new[:, 1]

        events += 1
        total_events += len(ids) - int(np.count_nonzero(side)) if scene.period is not None else len(ids)
        stop = ~done & ((w < weight_floor) | (events >= max_events))
        tally["truncated"][ids[stop]] += w[stop]
        keep = ~(done | stop)
        ids, px, py, d, e, w, chip, events = (a[keep] for a in (ids, px, py, d, e, w, chip, events))
    tally["absorbed"] = 1 - (tally["top"] + tally["bottom"] + tally["sides"] + tally["truncated"])
    return {**tally, "events": total_events, "polar": polar}


def _point_job(scene, case, orientation, x0, rays, rng):
    """One point dipole's rays: the tally and each escaped ray's polar angle (degrees)."""
    d, e = sample_dipole(orientation, rays, rng)
    pos = np.column_stack([np.full(rays, x0), np.full(rays, -case.emitter.depth)])
    r = trace(scene, pos, d, e, rng=rng)
    return r, r["polar"]


def run_case(case, layout, rays=20000, lateral="absorbing", seed=0):
    """Trace the point dipoles of a case (every orientation, position and wavelength), combined like
    the FDTD's dipoles: the keys of :func:`references.raytrace.run_case`, with ``farfield`` per degree
    of polar angle (0 to 90 degrees, summed over azimuth) and ``source`` "point"."""
    result = run_jobs(case, layout, rays, lateral, seed, _point_job, np.arange(0, 91))
    result["source"] = "point"
    return result


def trace_case(case, layout, rays=20000, lateral="absorbing", seed=0):
    """The case's emitters by ray optics: 3-D rays for point sources (:func:`run_case`), 2-D rays in the
    x-y plane for line sources (:func:`references.raytrace.run_case`)."""
    run = run_case if case.emitter.source == "point" else raytrace.run_case
    return run(case, layout, rays=rays, lateral=lateral, seed=seed)
