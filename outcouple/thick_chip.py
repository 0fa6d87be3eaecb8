"""``outcouple multipass``: a thick chip, with its top's full-wave response inside a multi-pass model.

The top's response (how it redistributes light arriving from inside at each angle bin, into the chip
and into the ambient) comes from Meep runs of one period (:mod:`fdtd_cases.meep_periodic`, turned into
arrays by :mod:`postprocess.redistribution`), or for a flat top from the exact Fresnel coefficients
of its films (:func:`references.multilayer.response`). It is cached in an HDF5 file named by a hash of
everything it depends on, so a new thickness, absorption or back side costs no FDTD. The passes are
summed by :mod:`references.multipass`.
"""

import hashlib
import json
import math
import os
import time
from pathlib import Path

import numpy as np

from fdtd_cases.angle_bins import bin_centres, far_edges
from fdtd_cases.case import Flat
from fdtd_cases.errors import CaseError
from fdtd_cases.layout import make_layout
from fdtd_cases.periodic_cell import POLARISATION_OF, response_grid
from fdtd_cases.runner import run_many
from postprocess import redistribution
from references import closed_forms, multilayer
from references import multipass as model
from references.reference import back_reflectivity, stack_at

SYMMETRIC = ("flat", "grating", "triangle", "sine")
"""Patterns symmetric about x = 0: a bin at -u mirrors the one at u, so only u >= 0 is run."""


def cache_folder():
    """Where texture responses are kept: ``$OUTCOUPLE_CACHE`` or ~/.cache/outcouple."""
    return Path(os.environ.get("OUTCOUPLE_CACHE") or Path.home() / ".cache" / "outcouple")


def check_case(case, source, angles):
    """What the multi-pass model cannot take, as CaseError naming the key."""
    if case.emitter.source != "line":
        raise CaseError(source, "emitter.source", '"point" is not modelled by multipass yet (2-D line emitters, '
                        "in-plane angles only); use source = \"line\"")
    if case.film and case.surface.pattern != "flat":
        raise CaseError(source, "film", "films on a patterned surface are not modelled yet")
    if not 2 <= angles <= 720:
        raise CaseError("command line", "--angles", f"is {angles}; give 2 to 720 angle bins")
    if case.emitter.depth >= case.chip.thickness:
        raise CaseError(source, "emitter.depth", f"is {case.emitter.depth:g} µm, not inside the chip "
                        f"({case.chip.thickness:g} µm thick)")


def _pols(case):
    """The 2-D polarisations the case's emitter orientations radiate, sorted."""
    return sorted({POLARISATION_OF[o] for o in case.emitter.orientations()})


def response_key(case, angles, grid, fdtd):
    """Everything the top's response depends on (JSON-ready); its hash names the cache file."""
    return {"format": redistribution.RESPONSE_FORMAT, "source": "fdtd" if fdtd else "exact",
            "surface": case.surface.model_dump(), "chip_index": case.chip.index,
            "ambient_index": case.ambient.index, "films": [f.model_dump() for f in case.film],
            "wavelengths": [float(w) for w in case.light.wavelengths()], "angles": angles,
            "pols": _pols(case), **(grid if fdtd else {})}


def _exact_tops(case, angles):
    tops = {}
    lossless = with_chip(case, alpha=0.0)
    for i, lam in enumerate(case.light.wavelengths()):
        stack = stack_at(lossless, lam)
        for pol in _pols(case):
            def reflect(theta, pol=pol, stack=stack, lam=lam):
                return multilayer.response(stack, pol, lam, theta)["R_up"]

            def transmit(theta, pol=pol, stack=stack, lam=lam):
                return multilayer.response(stack, pol, lam, theta)["T_up"]
            tops[(i, float(lam), pol)] = model.flat_top(reflect, transmit, angles, case.chip.index, case.ambient.index)
    return tops


def _fdtd_tops(case, angles, grid, workers, progress):
    """Run the periodic cells of every (wavelength, polarisation, bin) still needed; the top's arrays."""
    symmetric = case.surface.pattern in SYMMETRIC
    centres = bin_centres(angles)
    lit = [i for i, u in enumerate(centres) if u >= 0 or not symmetric]
    pols = _pols(case)
    items, where = [], []
    for w, lam in enumerate(case.light.wavelengths()):
        for pol in pols:
            for i in lit:
                for kind in ("bare", "texture"):
                    job = {"incidence": {"period": grid["period"], "resolution": grid["resolution"],
                                         "wavelength": float(lam), "u": float(centres[i]), "pol": pol, "kind": kind}}
                    items.append((case, None, job))
                    where.append((w, float(lam), pol, i, kind))
    started = time.perf_counter()
    raw = run_many(items, workers, progress)
    runs = {key: result for key, result in zip(where, raw)}
    tops = {}
    for w, lam in enumerate(case.light.wavelengths()):
        for pol in pols:
            columns = [None] * angles
            for i in lit:
                columns[i] = redistribution.incidence(runs[(w, float(lam), pol, i, "bare")],
                                                      runs[(w, float(lam), pol, i, "texture")], pol, grid["period"],
                                                      float(lam), case.chip.index, case.ambient.index)
            if symmetric:
                for i in range(angles):
                    if columns[i] is None:
                        columns[i] = redistribution.mirrored(columns[angles - 1 - i])
            tops[(w, float(lam), pol)] = redistribution.top_arrays(columns, angles, case.chip.index,
                                                                   case.ambient.index, float(lam), grid["period"])
            tops[(w, float(lam), pol)]["absorbed_worst"] = np.array(max(abs(c["absorbed"]) for c in columns))
    facts = {"runs": len(items), "wall_time": time.perf_counter() - started,
             "run_seconds": float(sum(r["wall_time"] for r in raw)), "meep_version": raw[0]["meep_version"],
             "resolution": float(raw[0]["resolution"]), "cells_per_period": int(raw[0]["cells"])}
    return tops, facts


def top_response(case, angles=90, fdtd=None, workers=None, progress=True, cache=True):
    """The top's arrays per (wavelength index, wavelength, polarisation), and facts about them.

    ``fdtd``: None (Meep for patterned tops, exact for flat ones), True or False.
    """
    fdtd = case.surface.pattern != "flat" if fdtd is None else fdtd
    if not fdtd:
        if case.surface.pattern != "flat":
            raise CaseError("command line", "--response", f"exact needs a flat top, not {case.surface.pattern!r}")
        return _exact_tops(case, angles), {"source": "exact", "runs": 0, "cached": False}
    grid, key, path = _response_file(case, angles)
    found = redistribution.read_response(path, key) if cache else None
    if found is not None:
        tops, facts = found
        return tops, {**facts, "source": "fdtd", "cached": True, "cache_file": str(path), **grid}
    tops, facts = _fdtd_tops(case, angles, grid, workers, progress)
    if cache:
        path.parent.mkdir(parents=True, exist_ok=True)
        redistribution.write_response(path, key, tops, facts)
    return tops, {**facts, "source": "fdtd", "cached": False, "cache_file": str(path) if cache else None, **grid}


def cached_thinning(case, angles=90):
    """The thinning curves of a patterned case from its cached top response (90 bins), or None (a flat
    top, not cached, or a case the multi-pass model does not take). Runs no Meep."""
    if case.surface.pattern == "flat":
        return None  # its curve is the flat top's: nothing to show beyond `reference`
    try:
        check_case(case, "case", angles)
    except CaseError:
        return None
    _, key, path = _response_file(case, angles)
    found = redistribution.read_response(path, key)
    if found is None:
        return None
    tops = found[0]
    flat = case.model_copy(update={"surface": Flat(pattern="flat")})
    return thinning_curves(case, tops, angles, _exact_tops(flat, angles), list(np.geomspace(1.0, 1000.0, 31)))


def _response_file(case, angles):
    """(grid, key, path) of a patterned case's Meep response in the cache."""
    grid = response_grid(case, make_layout(case, fdtd=False).x_side * 2)
    key = response_key(case, angles, grid, True)
    name = hashlib.sha256(json.dumps(key, sort_keys=True).encode()).hexdigest()[:20] + ".h5"
    return grid, key, cache_folder() / name


def _back(case, pol, lam):
    """R_b(theta) of the back side for one polarisation (0 for an open back)."""
    if case.chip.back == "open" or math.isinf(case.chip.thickness):
        return lambda theta: np.zeros_like(theta)
    if case.chip.back == "mirror":
        return lambda theta: np.ones_like(theta)
    stack = stack_at(with_chip(case, alpha=0.0), lam)
    return lambda theta: multilayer.response(stack, pol, lam, theta)["R_down"]


def solve_case(case, tops, angles):
    """The multi-pass answer of a case from its top's arrays: combined over orientations and wavelengths
    with equal weights (an incoherent chip: every emitter keeps its bulk power)."""
    alpha, t, d = case.chip.alpha_per_um, case.chip.thickness, case.emitter.depth
    per, spectrum, budgets, far, passes = {}, [], [], np.zeros(len(far_edges()) - 1), []
    wavelengths = case.light.wavelengths()
    crossing = model.bin_average(lambda th: model.attenuation(alpha, t, th), angles)
    for w, lam in enumerate(wavelengths):
        values, sides = [], {}
        for pol in _pols(case):  # the back side per polarisation, shared by its orientations
            back = _back(case, pol, lam)
            sides[pol] = (back, model.bin_average(lambda th: back(th) * model.attenuation(alpha, 2 * t, th), angles),
                          model.bin_average(back, angles))
        for orientation in case.emitter.orientations():
            pol = POLARISATION_OF[orientation]
            back, round_trip, back_reflect = sides[pol]
            s0, d0 = model.emitter_light(orientation, angles, alpha, d, t, back)
            r = model.solve(tops[(w, float(lam), pol)], s0, d0, crossing, round_trip, back_reflect, case.chip.back)
            values.append(r["efficiency"])
            per.setdefault(orientation, []).append(r["efficiency"])
            budgets.append(r["budget"])
            far += r["farfield"]
            passes.append(r["passes_99"])
        spectrum.append(float(np.mean(values)))
    budget = {k: float(np.mean([b[k] for b in budgets])) for k in budgets[0]}
    angle = far_edges()
    return {"efficiency": float(np.mean(spectrum)), "budget": budget,
            "by_orientation": {k: float(np.mean(v)) for k, v in per.items()},
            "efficiency_spectrum": spectrum, "wavelengths": [float(w) for w in wavelengths],
            "passes_99": int(max(passes)),
            "farfield": {"angle": ((angle[:-1] + angle[1:]) / 2).tolist(), "intensity": (far / len(budgets)).tolist()}}


def with_chip(case, **values):
    """The case with chip keys replaced (thickness, alpha): a sweep point."""
    return case.model_copy(update={"chip": case.chip.model_copy(update=values)})


def randomising(case):
    """The randomising-top bound of the case's chip (references.closed_forms.multipass, 2-D)."""
    values = [closed_forms.multipass(case.chip.index, case.ambient.index, case.chip.alpha_per_um, case.chip.thickness,
                                     case.emitter.depth, back_reflectivity(case, 2, lam), dim=2)
              for lam in case.light.wavelengths()]
    return float(np.mean(values))


VARIABLE = {"chip.thickness": "thickness", "chip.alpha": "alpha"}
"""The keys a multi-pass sweep may vary: neither changes the top's response."""


def parse_axis(text):
    """``KEY=START:STOP:COUNT[:log]`` -> (key, values); KEY chip.thickness or chip.alpha."""
    try:
        key, spec = text.split("=", 1)
        parts = spec.split(":")
        if len(parts) not in (3, 4) or (len(parts) == 4 and parts[3] != "log"):
            raise ValueError
        start, stop, count = float(parts[0]), float(parts[1]), int(parts[2])
    except ValueError:
        raise CaseError("command line", "--vary", f"expects KEY=START:STOP:COUNT or KEY=START:STOP:COUNT:log, "
                        f"got {text!r}") from None
    if key not in VARIABLE:
        raise CaseError("command line", "--vary", f"{key!r} would change the top's response; multipass varies "
                        f"{' and '.join(VARIABLE)} only (sweep the texture with 'outcouple sweep')")
    if count < 1 or (len(parts) == 4 and min(start, stop) <= 0):
        raise CaseError("command line", "--vary", f"{text!r}: COUNT must be at least 1 and a log axis positive")
    values = np.geomspace(start, stop, count) if len(parts) == 4 else np.linspace(start, stop, count)
    return key, [float(v) for v in values]


def chip_at(case, **values):
    """The case with chip keys replaced (a sweep point), its emitter mid-chip if the chip is thinner
    than twice the emitter's depth."""
    c = with_chip(case, **values)
    depth = min(case.emitter.depth, c.chip.thickness / 2)
    return c.model_copy(update={"emitter": case.emitter.model_copy(update={"depth": depth})})


def thinning_curves(case, tops, angles, flat_tops, thicknesses, rays=4000, ray_points=7, seed=0):
    """Efficiency against chip thickness: flat top, the texture (its response), the texture in ray
    optics (periodic sides, ``ray_points`` thicknesses) and the randomising bound; the emitter at
    :func:`chip_at`."""
    from references.raytrace3d import trace_case

    curves = {"thickness": list(thicknesses), "flat": [], "texture": [], "randomising": []}
    for t in thicknesses:
        c = chip_at(case, thickness=t)
        curves["flat"].append(solve_case(c, flat_tops, angles)["efficiency"])
        curves["texture"].append(solve_case(c, tops, angles)["efficiency"])
        curves["randomising"].append(randomising(c))
    ray_t = list(np.geomspace(min(thicknesses), max(thicknesses), ray_points)) if ray_points else []
    curves["rays_thickness"], curves["rays"], curves["rays_error"] = [], [], []
    for t in ray_t:
        c = chip_at(case, thickness=float(t))
        try:
            r = trace_case(c, make_layout(c, fdtd=False), rays=rays, lateral="periodic", seed=seed)
        except CaseError:  # a chip too thin for the pattern and the emitter: no ray point there
            continue
        curves["rays_thickness"].append(float(t))
        curves["rays"].append(r["efficiency"])
        curves["rays_error"].append(r["statistical_error"])
    return curves


def run(case, source, angles=90, response=None, workers=None, progress=True, vary=(), plot=None, cache=True):
    """``outcouple multipass`` (see the README): the result as a JSON-ready dict.

    ``response``: None (Meep for a patterned top, exact for a flat one), "fdtd" or "exact";
    ``vary``: up to two ``KEY=START:STOP:COUNT[:log]`` (chip.thickness, chip.alpha): a grid of chips
    with the same top (a chip thinner than twice the emitter's depth has its emitter mid-chip); ``plot``: write the thinning picture (efficiency against thickness) here.
    """
    check_case(case, source, angles)
    axes = [parse_axis(text) for text in vary]
    if len({key for key, _ in axes}) != len(axes) or len(axes) > 2:
        raise CaseError("command line", "--vary", "give each of chip.thickness and chip.alpha at most once")
    if plot is not None and not Path(plot).parent.is_dir():
        raise CaseError("command line", "--plot", f"the folder of {plot} does not exist")
    for key, values in axes:
        if min(values) < 0 or (key == "chip.thickness" and min(values) <= 0):
            raise CaseError("command line", "--vary", f"{key} must be positive")
    fdtd = {None: None, "fdtd": True, "exact": False}[response]
    tops, facts = top_response(case, angles, fdtd, workers, progress, cache)
    result = {"case": source, **solve_case(case, tops, angles), "angles": angles, "top_response": facts}
    flat_case = case.model_copy(update={"surface": Flat(pattern="flat")}) if case.surface.pattern != "flat" else case
    flat_tops = _exact_tops(flat_case, angles) if case.surface.pattern != "flat" or facts["source"] != "exact" else tops
    result["flat"] = solve_case(flat_case, flat_tops, angles)["efficiency"]
    result["randomising"] = randomising(case)
    if axes:
        points = [{}]
        for key, values in axes:
            points = [{**p, key: v} for p in points for v in values]
        result["sweep"] = []
        for p in points:
            one = solve_case(chip_at(case, **{VARIABLE[k]: v for k, v in p.items()}), tops, angles)
            result["sweep"].append({**p, "efficiency": one["efficiency"], "budget": one["budget"],
                                    "passes_99": one["passes_99"]})
    if plot is not None:
        from postprocess.plots import plot_thinning

        curves = thinning_curves(case, tops, angles, flat_tops, list(np.geomspace(1.0, 1000.0, 31)))
        title = f"{Path(source).name}: {case.surface.pattern} top, alpha = {case.chip.alpha:g} /cm, back {case.chip.back}"
        plot_thinning(curves, plot, title=title)
        result["plot"] = str(plot)
        result["thinning"] = curves
    return result
