"""2-D Monte-Carlo ray tracing on the same surface polyline as the FDTD.

Rays are traced in the (x, y) plane of the FDTD case, through the chip
polygon built by :mod:`fdtd_cases.geometry` (the same generator, the same
vertices), with:

- emission from each emitter position with the line emitter's angular
  pattern (per radian: out-of-plane uniform; parallel cos^2 and normal
  sin^2 of the angle from the surface normal, as in
  :func:`references.planar.pattern`);
- polarisation carried along: an out-of-plane current radiates s (E along
  z) light, an in-plane one p light, and in 2-D a ray keeps its
  polarisation at every interface;
- Fresnel reflection and refraction at every crossing of the surface in
  either direction (light that leaves one facet may re-enter another),
  with thin films on the surface through their exact coherent
  coefficients at the local angle (:func:`references.multilayer.response`,
  the films taken as conformal and of negligible thickness for the ray
  path); light absorbed in a film counts as absorbed;
- Beer-Lambert absorption in the chip (intensity coefficient alpha);
- the back side: open (rays crossing the bottom line leave), a perfect
  mirror, a metal (Fresnel reflectance, the rest absorbed) or a substrate
  (Fresnel: transmitted rays leave through the bottom);
- lateral boundaries: absorbing at x = +/- x_side like the FDTD's, or
  periodic with the pattern's period.

Each interaction picks one branch (reflect or transmit) with the
probability of its power share; the ray keeps its weight, which only
absorption lowers, so every estimate is unbiased. A ray ends when it leaves
(top, bottom or sides), when its weight falls below ``weight_floor`` or
after ``max_events`` interactions; what is left in such rays is reported as
``truncated``. The statistical error of the escaped fraction is the
standard error of the per-ray escaped weight.
"""

import math
from dataclasses import dataclass

import numpy as np

from fdtd_cases import geometry

from . import multilayer
from .reference import stack_at

TABLE_POINTS = 20001
"""Angles in the tabulated interface coefficients (0 to 90 degrees)."""
EPS = 1e-9
"""Distance (µm) a ray moves off a surface before looking for the next one."""


@dataclass(frozen=True)
class Scene:
    """Everything the tracer needs, in µm.

    Parameters
    ----------
    segments : (M, 2, 2) array
        Surface segments (start, end), the chip below them.
    n_chip, n_ambient : float
    alpha : float
        Chip intensity attenuation, 1/µm.
    up, down : callables
        ``up(pol, cos_i)`` -> (R, T) for light in the chip meeting the surface;
        ``down(pol, cos_i)`` for light in the ambient meeting it.
    back : {"open", "mirror", "metal", "substrate"}
    back_coefficients : callable or None
        ``(pol, cos_i)`` -> (R, T) of the back side (metal, substrate).
    y_back : float
        The back side (mirror, metal, substrate) or the bottom line (open).
    y_top : float
        Rays in the ambient crossing this line going up have escaped.
    x_side : float
        Absorbing lateral boundaries at +/- x_side (``period`` None).
    period : float or None
        Periodic lateral boundaries: the segments span one period centred on 0.
    """

    segments: np.ndarray
    n_chip: float
    n_ambient: float
    alpha: float
    up: object
    down: object
    back: str
    back_coefficients: object
    y_back: float
    y_top: float
    x_side: float
    period: float | None = None


def _coefficients(stack, wavelength, key):
    """A lookup (pol, cos_i) -> (R, T) tabulated at evenly spaced cos_i (linear interpolation).

    ``key`` "top": the stack's top seen from its chip side (R_up, T_up);
    "back": its back side (R_down, T None).
    """
    cos = np.linspace(0.0, 1.0, TABLE_POINTS)
    theta = np.arccos(cos)
    tables = {}
    for pol in ("s", "p"):
        r = multilayer.response(stack, pol, wavelength, theta)
        tables[pol] = (r["R_up"], r["T_up"]) if key == "top" else (r["R_down"], None)
    last = TABLE_POINTS - 1

    def lookup(pol, cos_i):
        R_table, T_table = tables[pol]
        x = np.clip(cos_i, 0.0, 1.0) * last
        i = np.minimum(x.astype(np.int64), last - 1)
        f = x - i
        R = R_table[i] * (1 - f) + R_table[i + 1] * f
        T = None if T_table is None else T_table[i] * (1 - f) + T_table[i + 1] * f
        return R, T
    return lookup


def _back_lookup(kind, n_chip, back_index, wavelength):
    """(pol, cos_i) -> (R, T) of a metal or substrate back side; None for open or mirror backs."""
    if kind not in ("metal", "substrate"):
        return None
    reflect = _coefficients(multilayer.Stack(1.0, (), complex(n_chip), 1.0, kind, back_index), wavelength, "back")
    passes = kind == "substrate"   # a substrate transmits the rest, a metal absorbs it

    def lookup(pol, cos_i):
        R, _ = reflect(pol, cos_i)
        return R, (1 - R if passes else np.zeros_like(R))
    return lookup


def scene_from_case(case, layout, wavelength, lateral="absorbing"):
    """The ray scene of a case at one wavelength, on the FDTD layout's domain."""
    stack = stack_at(case, wavelength)
    n_chip = case.chip.index
    films = stack.films
    top = multilayer.Stack(case.ambient.index, films, complex(n_chip), math.inf)
    reverse = multilayer.Stack(n_chip, tuple(reversed(films)), complex(case.ambient.index), math.inf)
    up, down = _coefficients(top, wavelength, "top"), _coefficients(reverse, wavelength, "top")
    back = _back_lookup(case.chip.back, n_chip, stack.back_index, wavelength)
    period = None
    if lateral == "periodic":
        period = getattr(case.surface, "period", None)
        if case.surface.pattern == "flat":
            period = 1.0
        polyline = geometry.surface_polyline(case.surface, -period / 2, period / 2)
    else:
        polyline = layout.polyline
    segments = np.stack([polyline[:-1], polyline[1:]], axis=1)
    keep = np.linalg.norm(segments[:, 1] - segments[:, 0], axis=1) > 1e-12
    if period is None:
        # The surface runs on into the absorbing layers; rays there have already left by the sides.
        x_lo, x_hi = segments[:, :, 0].min(axis=1), segments[:, :, 0].max(axis=1)
        keep &= (x_hi >= -layout.x_side - 1e-9) & (x_lo <= layout.x_side + 1e-9)
    if math.isfinite(case.chip.thickness) and case.chip.back != "open":
        y_back = -case.chip.thickness
    else:
        y_back = layout.y_bottom
    return Scene(segments=segments[keep], n_chip=n_chip, n_ambient=case.ambient.index,
                 alpha=case.chip.alpha_per_um, up=up, down=down, back=case.chip.back,
                 back_coefficients=back, y_back=y_back, y_top=layout.y_top,
                 x_side=layout.x_side, period=period)


def sample_directions(orientation, count, rng):
    """Unit vectors drawn from the line emitter's bulk pattern (angle from +y: theta)."""
    out = np.empty((0, 2))
    while len(out) < count:
        psi = rng.uniform(0, 2 * np.pi, 2 * (count - len(out)) + 16)
        d = np.column_stack([np.sin(psi), np.cos(psi)])  # (sin theta, cos theta)
        if orientation == "parallel":
            accept = rng.uniform(size=len(psi)) < d[:, 1] ** 2
        elif orientation == "normal":
            accept = rng.uniform(size=len(psi)) < d[:, 0] ** 2
        else:
            accept = np.ones(len(psi), dtype=bool)
        out = np.concatenate([out, d[accept]])
    return out[:count]


def hit_segments(px, py, dx, dy, geometry):
    """Distance to the nearest surface segment ahead of each ray, and that segment's index.

    ``geometry`` is (ax, ay, ex, ey) of the segments, each of shape (1, M):
    start points and edge vectors.
    """
    ax, ay, ex, ey = geometry
    wx, wy = ax - px[:, None], ay - py[:, None]
    dx, dy = dx[:, None], dy[:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        inverse = 1.0 / (dx * ey - dy * ex)
        t = (wx * ey - wy * ex) * inverse
        s = (wx * dy - wy * dx) * inverse
    t = np.where((t > EPS) & (s >= -1e-12) & (s <= 1 + 1e-12), t, np.inf)
    if t.shape[1] == 1:
        return t[:, 0], np.zeros(len(px), dtype=np.int64)
    if t.shape[1] == 2:
        second = t[:, 1] < t[:, 0]
        return np.where(second, t[:, 1], t[:, 0]), second.astype(np.int64)
    index = np.argmin(t, axis=1)
    return t[np.arange(len(px)), index], index


def next_event(scene, px, py, dx, dy, chip, geometry, edge):
    """Distance to each ray's next event, the event (0 surface, 1 back or bottom line, 2 top line,
    3 lateral boundary at +/- ``edge``) and the surface segment met; ``chip``: rays inside the chip."""
    t_surf, seg = hit_segments(px, py, dx, dy, geometry)
    with np.errstate(divide="ignore", invalid="ignore"):
        t_back = np.where(chip & (dy < 0), (scene.y_back - py) / dy, np.inf)
        t_top = np.where(~chip & (dy > 0), (scene.y_top - py) / dy, np.inf)
        t_side = np.where(dx > 0, (edge - px) / dx, np.where(dx < 0, (-edge - px) / dx, np.inf))
    t, choice = t_surf, np.zeros(len(px), dtype=np.int8)
    for code, other in ((1, t_back), (2, t_top), (3, t_side)):
        other = np.maximum(other, 0)
        nearer = other < t
        t = np.where(nearer, other, t)
        choice[nearer] = code
    return t, choice, seg


def lateral(scene, choice, done, ids, w, px, dx, tally):
    """Rays at a lateral boundary (event 3) leave by the sides (their weight tallied, ``done`` set)
    or, with periodic boundaries, wrap round by one period; returns the mask of those rays."""
    side = (choice == 3) & ~done
    if scene.period is None:
        tally["sides"][ids[side]] += w[side]
        done |= side
    else:
        px[side] -= np.sign(dx[side]) * scene.period
    return side


def _lambertian_up(count, rng):
    """Directions of randomised light leaving a flat top downward-facing... drawn for the upward
    stream: sin(theta) uniform in (-1, 1) is the 2-D Lambertian (cos theta) distribution."""
    s = rng.uniform(-1, 1, count)
    return np.column_stack([s, np.sqrt(1 - s * s)])


def trace(scene, pos, d, pol, rng=None, weight_floor=1e-4, max_events=10000, angles_out=False,
          randomising=False):
    """Trace rays from ``pos`` (N, 2) in directions ``d`` (N, 2), all starting in the chip.

    Parameters
    ----------
    randomising : bool
        Replace the surface by an ideal randomiser (for checks against the
        multi-pass model; flat surfaces only): every arrival from the chip
        draws a Lambertian direction; inside the escape cone the ray leaves
        with no loss, outside it goes back down along the drawn angle.

    Returns
    -------
    dict
        Per-ray arrays ``top``, ``bottom``, ``sides``, ``absorbed``,
        ``truncated`` (weights, each ray starting with 1), ``events`` (the
        number of interactions traced in all; a periodic wrap is not one,
        though it counts towards ``max_events``), and with ``angles_out`` the
        escape angle of each escaped ray (degrees from the normal, signed by
        x) in ``angle`` (NaN for rays that did not escape), and sin(theta) of each ray that left
        through an open back in ``down``.
    """
    n = len(pos)
    rng = rng if rng is not None else np.random.default_rng(0)
    tally = {k: np.zeros(n) for k in ("top", "bottom", "sides", "absorbed", "truncated")}
    angle, down = np.full(n, np.nan), np.full(n, np.nan)
    normals = scene.segments[:, 1] - scene.segments[:, 0]
    normals = np.column_stack([-normals[:, 1], normals[:, 0]]) / np.linalg.norm(normals, axis=1)[:, None]
    sin_c = scene.n_ambient / scene.n_chip
    a = scene.segments[:, 0]
    e = scene.segments[:, 1] - a
    geometry = (a[None, :, 0], a[None, :, 1], e[None, :, 0], e[None, :, 1])
    # The active rays, compacted as they finish.
    ids = np.arange(n)
    px, py = np.array(pos[:, 0], dtype=float), np.array(pos[:, 1], dtype=float)
    dx, dy = np.array(d[:, 0], dtype=float), np.array(d[:, 1], dtype=float)
    w = np.ones(n)
    chip = np.ones(n, dtype=bool)
    events = np.zeros(n, dtype=np.int64)
    total_events = 0
    edge = scene.x_side if scene.period is None else scene.period / 2
    while len(ids):
        t, choice, seg = next_event(scene, px, py, dx, dy, chip, geometry, edge)
        stuck = ~np.isfinite(t)          # nothing ahead (should not happen inside a closed domain)
        t[stuck] = 0.0
        if scene.alpha > 0:
            w = w * np.where(chip, np.exp(-scene.alpha * t), 1.0)
        px, py = px + t * dx, py + t * dy
        done = stuck | ((choice == 1) & (scene.back == "open"))
        tally["bottom"][ids[done]] += w[done]
        if angles_out:
            down[ids[done & ~stuck]] = dx[done & ~stuck]

        esc = choice == 2
        tally["top"][ids[esc]] += w[esc]
        if angles_out:
            angle[ids[esc]] = np.degrees(np.arctan2(dx[esc], dy[esc]))
        done |= esc

        side = lateral(scene, choice, done, ids, w, px, dx, tally)

        back = np.nonzero((choice == 1) & ~done)[0]
        if len(back):
            if scene.back == "mirror":
                dy[back] *= -1
            else:
                R, T = scene.back_coefficients(pol, -dy[back])
                w[back] *= R + T
                reflect = rng.uniform(size=len(back)) * np.maximum(R + T, 1e-300) < R
                out = back[~reflect]
                tally["bottom"][ids[out]] += w[out]
                done[out] = True
                dy[back[reflect]] *= -1

        hit = np.nonzero((choice == 0) & ~done)[0]
        if len(hit) and randomising:
            new = _lambertian_up(len(hit), rng)
            from_chip = chip[hit]
            leaves = from_chip & (np.abs(new[:, 0]) < sin_c)
            eta = scene.n_chip / scene.n_ambient
            sx = new[:, 0] * eta
            dx[hit] = np.where(leaves, sx, new[:, 0])
            dy[hit] = np.where(leaves, np.sqrt(np.clip(1 - sx * sx, 0, None)), -new[:, 1])
            chip[hit] = ~leaves
            py[hit] += 10 * EPS * dy[hit]
            px[hit] += 10 * EPS * dx[hit]
        elif len(hit):
            nx, ny = normals[seg[hit], 0], normals[seg[hit], 1]
            vx, vy = dx[hit], dy[hit]
            dot = vx * nx + vy * ny
            cos_i = np.abs(dot)
            from_chip = chip[hit]
            R, T = np.empty(len(hit)), np.empty(len(hit))
            for side_chip, lookup in ((True, scene.up), (False, scene.down)):
                m = from_chip == side_chip
                if m.any():
                    R[m], T[m] = lookup(pol, cos_i[m])
            share = np.clip(R + T, 0, 1)
            w[hit] *= share
            reflect = rng.uniform(size=len(hit)) * np.maximum(share, 1e-300) < R
            sign = -np.sign(dot)                          # N = sign * normal faces the incoming ray
            Nx, Ny = sign * nx, sign * ny
            eta = np.where(from_chip, scene.n_chip / scene.n_ambient, scene.n_ambient / scene.n_chip)
            sin2 = eta ** 2 * (1 - cos_i ** 2)
            through = ~reflect & (sin2 < 1)
            k = np.where(through, eta * cos_i - np.sqrt(np.clip(1 - sin2, 0, None)), 2 * cos_i)
            scale = np.where(through, eta, 1.0)
            ux, uy = scale * vx + k * Nx, scale * vy + k * Ny
            norm = np.hypot(ux, uy)
            dx[hit], dy[hit] = ux / norm, uy / norm
            chip[hit] = np.where(through, ~from_chip, from_chip)
            px[hit] += 10 * EPS * dx[hit]
            py[hit] += 10 * EPS * dy[hit]

        events += 1                                   # steps, periodic wraps included (the cap)
        total_events += len(ids) - int(np.count_nonzero(side)) if scene.period is not None else len(ids)
        stop = ~done & ((w < weight_floor) | (events >= max_events))
        tally["truncated"][ids[stop]] += w[stop]
        keep = ~(done | stop)
        ids, px, py, dx, dy, w, chip, events = (a[keep] for a in (ids, px, py, dx, dy, w, chip, events))
    # Weight lost on the way (chip, films, metal) is whatever did not end anywhere else.
    tally["absorbed"] = 1 - (tally["top"] + tally["bottom"] + tally["sides"] + tally["truncated"])
    result = {**tally, "events": total_events}
    if angles_out:
        result["angle"], result["down"] = angle, down
    return result


def emitter_rays(case, layout, orientation, x0, count, rng):
    """Starting points and directions of ``count`` rays from the emitter at (x0, -depth)."""
    d = sample_directions(orientation, count, rng)
    pos = np.column_stack([np.full(count, x0), np.full(count, -case.emitter.depth)])
    return pos, d


def _line_job(scene, case, orientation, x0, rays, rng):
    """One line emitter's rays: the tally and each ray's escape angle (signed, degrees)."""
    pol = "s" if orientation == "out-of-plane" else "p"
    pos, d = emitter_rays(case, None, orientation, x0, rays, rng)
    r = trace(scene, pos, d, pol, rng=rng, angles_out=True)
    return r, r["angle"]


def run_case(case, layout, rays=20000, lateral="absorbing", seed=0):
    """Trace every (orientation, position, wavelength) of a case; combined like the FDTD jobs.

    Ray optics gives every emitter its bulk power (no interference, no
    change of emission), so all jobs carry equal weight.

    Returns
    -------
    dict
        ``efficiency``, ``efficiency_spectrum``, ``wavelengths``,
        ``by_orientation``, ``budget`` (top, bottom, sides, absorbed,
        truncated), ``statistical_error`` (standard error of the efficiency),
        ``rays_for_half_percent`` (rays per job for a 0.5% relative error),
        ``rays``, ``events``, ``farfield`` (angle, intensity per degree).
    """
    return run_jobs(case, layout, rays, lateral, seed, _line_job, np.arange(-90, 91))


def run_jobs(case, layout, rays, lateral, seed, one_job, bins):
    """Every (orientation, wavelength, position) job of a case through ``one_job(scene, case,
    orientation, x0, rays, rng)`` -> (tally, escape angles), combined with equal weights; the
    escaped power binned over ``bins`` (degrees) per degree (see :func:`run_case`)."""
    rng = np.random.default_rng(seed)
    wavelengths = case.light.wavelengths()
    per = {}
    spectrum = np.zeros(len(wavelengths))
    all_top, events = [], 0
    totals = {k: 0.0 for k in ("top", "bottom", "sides", "absorbed", "truncated")}
    hist = np.zeros(len(bins) - 1)
    jobs = 0
    for orientation in case.emitter.orientations():
        tops = []
        for j, lam in enumerate(wavelengths):
            scene = scene_from_case(case, layout, lam, lateral)
            for x0 in case.emitter.x:
                r, angle = one_job(scene, case, orientation, x0, rays, rng)
                for k in totals:
                    totals[k] += float(np.mean(r[k]))
                tops.append(r["top"])
                spectrum[j] += float(np.mean(r["top"]))
                esc = np.isfinite(angle)
                hist += np.histogram(angle[esc], bins=bins, weights=r["top"][esc])[0] / rays
                events += r["events"]
                jobs += 1
        per[orientation] = float(np.mean(np.concatenate(tops)))
        all_top.append(np.concatenate(tops))
    top = np.concatenate(all_top)
    efficiency = totals["top"] / jobs
    error = float(np.std(top) / np.sqrt(len(top)))
    relative = error / efficiency if efficiency > 0 else math.inf
    per_job_rays = rays * (relative / 0.005) ** 2 if efficiency > 0 else math.inf
    return {
        "efficiency": efficiency,
        "efficiency_spectrum": (spectrum / (jobs / len(wavelengths))).tolist(),
        "wavelengths": [float(w) for w in wavelengths],
        "by_orientation": per,
        "budget": {k: v / jobs for k, v in totals.items()},
        "statistical_error": error,
        "rays_for_half_percent": int(math.ceil(per_job_rays)) if math.isfinite(per_job_rays) else None,
        "rays": rays * jobs,
        "events": events,
        "farfield": {"angle": (bins[:-1] + 0.5).tolist(), "intensity": (hist / jobs).tolist()},
    }
