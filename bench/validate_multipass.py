"""Validate ``outcouple multipass`` against the ray tracer, and time it.

Parts (give one or more on the command line; default: all):

- ``vgroove``: V-grooves whose period is many wavelengths (period 4 µm = 8 chip wavelengths, 0.5 µm deep:
  14 degree facets, n = 2.0, 1 µm light, out-of-plane emitter) on a 200 µm chip, alpha = 10 /cm, perfect
  mirror. The multi-pass model with Meep's response (90 bins, the default) against the ray tracer on
  the same chip with periodic sides (200 000 rays). Goal: within 3%. About 50 minutes on 2 cores.
- ``vgroove45``: the same with 2 µm deep grooves (45 degree facets) and 30 bins, where near-normal light
  is retro-reflected by two total reflections in ray optics and diffracts in the wave solution (the
  README's table says how far the two differ and why). About 15 minutes.
- ``subwavelength``: a grating of period 0.3 µm, half the vacuum wavelength (no diffracted order
  reaches the air; inside the n = 2.5 chip the orders lie 0.8 apart in sin(theta)), 0.15 µm deep, on a
  500 µm chip, alpha = 4 /cm, perfect mirror: the multi-pass answer and the ray tracer's, which treats
  the ridges as geometric walls. The case where rays fail.
- ``speed``: the full-wave response of configs/demo_grating.toml at its centre wavelength only
  (time, number of Meep runs, 90 bins, both polarisations), and the multi-pass solve per thickness
  (goal: under 10 ms for 90 bins).

Run: ``.venv/bin/python bench/validate_multipass.py [vgroove] [vgroove45] [subwavelength] [speed]`` (the response
is cached in a temporary folder, so every run recomputes it). Prints one line per figure.
"""

import os
import sys
import tempfile
import time

import numpy as np


def ray_tops(case, angles, rays_per_bin=20000):
    """The top's arrays in ray optics (references.multipass.ray_optics_top), bin by bin like Meep's."""
    import dataclasses

    from fdtd_cases.layout import make_layout
    from fdtd_cases.periodic_cell import POLARISATION_OF
    from references import multipass, raytrace

    lam = float(case.light.wavelength)
    scene = raytrace.scene_from_case(case, make_layout(case, fdtd=False), lam, lateral="periodic")
    scene = dataclasses.replace(scene, back="open", y_back=-case.surface.height - 1e-3, alpha=0.0)
    return {(0, lam, pol): multipass.ray_optics_top(scene, angles, pol, rays_per_bin)
            for pol in {POLARISATION_OF[o] for o in case.emitter.orientations()}}


def main(parts):
    os.environ["OUTCOUPLE_CACHE"] = tempfile.mkdtemp(prefix="outcouple_bench_")
    import outcouple
    from fdtd_cases.case_file import parse_case
    from outcouple import thick_chip

    for name, height, angles in (("vgroove", 0.5, 90), ("vgroove45", 2.0, 30)):
        if name not in parts:
            continue
        case = {"light": {"wavelength": 1.0},
                "chip": {"index": 2.0, "alpha": 10.0, "thickness": 200.0, "back": "mirror"},
                "surface": {"pattern": "triangle", "period": 4.0, "height": height},
                "emitter": {"depth": 100.0, "orientation": "out-of-plane"}}
        started = time.perf_counter()
        wave = outcouple.multipass(case, angles=angles, progress=False)
        rays = outcouple.rays(case, rays=200000, lateral="periodic")
        diff = wave["efficiency"] / rays["efficiency"] - 1
        parsed = parse_case(case)
        binned = thick_chip.solve_case(parsed, ray_tops(parsed, angles), angles)["efficiency"]
        print(f"{name}: the model on ray-optics arrays, {angles} bins: {binned:.4f} "
              f"({100 * (binned / rays['efficiency'] - 1):+.2f}% against rays: the bins' own error)", flush=True)
        print(f"{name}: height {height} µm, {angles} bins: multipass {wave['efficiency']:.4f} "
              f"({wave['top_response']['runs']} Meep runs, {wave['top_response']['wall_time']:.0f} s); "
              f"rays {rays['efficiency']:.4f} +/- {rays['statistical_error']:.4f}; difference {100 * diff:+.2f}% "
              f"(goal: within 3%); flat top {wave['flat']:.4f}, randomising {wave['randomising']:.4f}; "
              f"{time.perf_counter() - started:.0f} s in all", flush=True)
    if "subwavelength" in parts:
        case = {"light": {"wavelength": 0.6},
                "chip": {"index": 2.5, "alpha": 4.0, "thickness": 500.0, "back": "mirror"},
                "surface": {"pattern": "grating", "period": 0.3, "height": 0.15, "fill": 0.5},
                "emitter": {"depth": 250.0, "orientation": "isotropic"}}
        wave = outcouple.multipass(case, angles=90, progress=False)
        rays = outcouple.rays(case, rays=100000, lateral="periodic")
        print(f"subwavelength: multipass {wave['efficiency']:.4f} ({wave['top_response']['runs']} Meep runs, "
              f"{wave['top_response']['wall_time']:.0f} s); rays {rays['efficiency']:.4f} +/- "
              f"{rays['statistical_error']:.4f}; rays/wave {rays['efficiency'] / wave['efficiency']:.2f}; "
              f"flat top {wave['flat']:.4f}, randomising {wave['randomising']:.4f}", flush=True)
    if "speed" in parts:
        from outcouple.api import load_case

        case = load_case("configs/demo_grating.toml")
        case = case.model_copy(update={"light": case.light.model_copy(update={"band": 0.0, "samples": None})})
        started = time.perf_counter()
        tops, facts = thick_chip.top_response(case, 90, workers=2, progress=False)
        wall = time.perf_counter() - started
        print(f"speed: demo grating response at {case.light.wavelength:g} µm, 90 bins, both polarisations: "
              f"{facts['runs']} Meep runs, {wall:.0f} s on 2 workers ({facts['run_seconds']:.0f} s of runs)", flush=True)
        thick = case.model_copy(update={"chip": case.chip.model_copy(update={"thickness": 300.0, "alpha": 5.0,
                                                                               "back": "mirror"}),
                                        "emitter": case.emitter.model_copy(update={"depth": 150.0})})
        thick_chip.solve_case(thick, tops, 90)
        times = []
        for t in np.geomspace(1, 1000, 30):
            one = thick_chip.chip_at(thick, thickness=float(t))
            began = time.perf_counter()
            thick_chip.solve_case(one, tops, 90)
            times.append(time.perf_counter() - began)
        per = np.median(times) / len(case.emitter.orientations())
        print(f"speed: multi-pass solve per thickness and orientation, 90 bins: median {1000 * per:.2f} ms "
              f"(goal 10 ms: ratio {per / 0.010:.2f}); the three orientations together {1000 * np.median(times):.1f} ms")


if __name__ == "__main__":
    main(sys.argv[1:] or ["vgroove", "vgroove45", "subwavelength", "speed"])
