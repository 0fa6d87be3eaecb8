"""Textured surfaces at the default grid against grid-converged values.

One chip (n = 2.5 in air, 1 µm light, emitter 1 µm deep, domain 12 µm wide) under three textures of
period 0.8 µm and etch depth 0.3 µm: a rectangular grating (fill 0.5), V-grooves (triangle) and a
sine, the sine on a narrower case of its own (emitter 0.7 µm deep, domain 6 µm wide). Each runs with an isotropic line emitter at 16 (the default), 24 and 32 points per chip
wavelength, the grating (which runs with mirror symmetry, hence cheaper) also at 48; the levels
above the default are extrapolated (Richardson, postprocess.convergence.extrapolate: the order
observed from three levels, else 2), for the triangle and sine all three levels.

Independent construction: the grating's out-of-plane emitter is also computed by a plain Meep
script here (independent_grating: ridges as mp.Block, Meep's own point source and add_flux
monitors, none of the package's geometry, source stencil or flux integration) at 80 and 120 points
per µm, extrapolated; it must agree with the package's limit.

Prints per texture and orientation the values, the limit and the default grid's error, and writes
each texture's limits to tests/data/textured_converged.json as soon as they are known (the other
entries kept), which tests/test_textured_accuracy.py checks the default grid against. The grating
and triangle take about 10 minutes on 2 cores. The sine's prism has 48 vertices per period and
Meep 1.25's set-up of a prism grows with its vertex count times the pixels it spans, hence its
narrower case: 33 s a run at the default grid there (100 s on the 12 µm case).

    .venv/bin/python bench/validate_textures.py                   # all, writes the JSON
    .venv/bin/python bench/validate_textures.py triangle          # one texture, writes its entry
    .venv/bin/python bench/validate_textures.py sine print        # one texture, prints only
    .venv/bin/python bench/validate_textures.py independent       # the triangle by a plain Meep script
"""

import json
import sys
from pathlib import Path

import outcouple
from postprocess.convergence import extrapolate

OUT = Path(__file__).resolve().parent.parent / "tests" / "data" / "textured_converged.json"

BASE = {"light": {"wavelength": 1.0}, "chip": {"index": 2.5},
        "emitter": {"depth": 1.0, "orientation": "isotropic"}, "grid": {"width": 12.0}}
PERIOD, HEIGHT = 0.8, 0.3


SMALL = {**BASE, "emitter": {**BASE["emitter"], "depth": 0.7}, "grid": {"width": 6.0}}
"""The sine's own, narrower case: its prism's set-up grows with vertices x pixels (33 s a run here, 100 s on BASE)."""

TEXTURES = {
    "grating": ({"pattern": "grating", "period": PERIOD, "height": HEIGHT, "fill": 0.5}, (16, 24, 32, 48), BASE),
    "triangle": ({"pattern": "triangle", "period": PERIOD, "height": HEIGHT}, (16, 24, 32), BASE),
    "sine": ({"pattern": "sine", "period": PERIOD, "height": HEIGHT}, (16, 24, 32), SMALL),
}


PLAIN = {"n": 2.5, "depth": 1.0, "width": 12.0, "pml": 1.0}
"""The plain scripts' chip and domain: BASE's chip and emitter, Meep's absorbing layers 1 µm thick."""


def _plain_efficiency(resolution, chip_objects):
    """Top flux / emitted flux of an out-of-plane line emitter by a plain Meep script.

    ``chip_objects(chip, x_span, y_bottom)`` returns the chip's Meep objects; the rest (Meep's own
    point source, ``add_flux`` on a top line and on a square around the emitter, the stop rule)
    uses none of the package's code.
    """
    import meep as mp

    mp.verbosity(0)
    depth, width, pml = PLAIN["depth"], PLAIN["width"], PLAIN["pml"]
    sx, y_top, y_bottom = width + 2 * pml, 0.6 + 0.4 + pml, -depth - 1.0 - pml
    sy, yc = y_top - y_bottom, (y_top + y_bottom) / 2
    source = mp.Source(mp.GaussianSource(1.0, fwidth=0.5), component=mp.Ez, center=mp.Vector3(0, -depth))
    sim = mp.Simulation(cell_size=mp.Vector3(sx, sy), geometry_center=mp.Vector3(0, yc), resolution=resolution,
                        boundary_layers=[mp.PML(pml)], sources=[source], symmetries=[mp.Mirror(mp.X)],
                        geometry=chip_objects(mp.Medium(index=PLAIN["n"]), sx, y_bottom))
    top = sim.add_flux([1.0], mp.FluxRegion(center=mp.Vector3(0, 0.6), size=mp.Vector3(width, 0)))
    a = 0.15
    box = [sim.add_flux([1.0], mp.FluxRegion(center=mp.Vector3(0, -depth + s * a), size=mp.Vector3(2 * a, 0), weight=s))
           for s in (1, -1)]
    box += [sim.add_flux([1.0], mp.FluxRegion(center=mp.Vector3(s * a, -depth), size=mp.Vector3(0, 2 * a), weight=s))
            for s in (1, -1)]
    sim.run(until_after_sources=mp.stop_when_dft_decayed(tol=1e-8, minimum_run_time=50))
    return mp.get_fluxes(top)[0] / sum(mp.get_fluxes(b)[0] for b in box)


def independent_grating(resolution):
    """The grating's out-of-plane emitter by a plain Meep script: ridges as ``mp.Block``."""
    import meep as mp

    def blocks(chip, sx, y_bottom):
        body = mp.Block(center=mp.Vector3(0, (y_bottom - 1 - HEIGHT) / 2), size=mp.Vector3(mp.inf, -HEIGHT - y_bottom + 1, mp.inf),
                        material=chip)
        return [body] + [mp.Block(center=mp.Vector3(k * PERIOD, -HEIGHT / 2), size=mp.Vector3(0.5 * PERIOD, HEIGHT, mp.inf),
                                  material=chip) for k in range(-int(sx / PERIOD) - 1, int(sx / PERIOD) + 2)]
    return _plain_efficiency(resolution, blocks)


def independent_triangle(resolution):
    """The V-grooves' out-of-plane emitter by a plain Meep script: the chip as one ``mp.Prism`` whose
    vertices are computed here (not by fdtd_cases.geometry)."""
    import meep as mp

    def prism(chip, sx, y_bottom):
        reach = int(sx / PERIOD) + 2
        vertices = [mp.Vector3(k * PERIOD / 2, 0.0 if k % 2 == 0 else -HEIGHT) for k in range(-2 * reach, 2 * reach + 1)]
        vertices += [mp.Vector3(reach * PERIOD, y_bottom - 1), mp.Vector3(-reach * PERIOD, y_bottom - 1)]
        return [mp.Prism(vertices=vertices, height=mp.inf, material=chip)]
    return _plain_efficiency(resolution, prism)


def main(args):
    if "independent" in args:  # only the plain-script triangle, against the committed limit
        plain = {r: independent_triangle(r) for r in (80, 120)}
        fit = extrapolate(list(plain), list(plain.values()))
        limit = json.loads(OUT.read_text())["limits"]["triangle"]["out-of-plane"]
        print("triangle   out-of-plane by a plain Meep script (one prism, Meep's source and add_flux): "
              + ", ".join(f"{v:.5f} at {r} points/um" for r, v in plain.items())
              + f"; limit {fit['limit']:.5f}, the package's {limit:.5f} ({100 * (limit / fit['limit'] - 1):+.2f}%)",
              flush=True)
        return
    chosen = {k: v for k, v in TEXTURES.items() if not [a for a in args if a != "print"] or any(a in k for a in args)}
    converged = {}
    for name, (surface, levels, base) in chosen.items():
        rows = {}
        for ppw in levels:
            case = {**base, "surface": surface, "grid": {**base["grid"], "points_per_wavelength": float(ppw)}}
            result = outcouple.run(case, workers=2, progress=False).to_dict()
            rows[ppw] = {**result["by_orientation"], "combined": result["efficiency"]}
            print(f"{name:<10} {ppw:>3} points/wavelength  " + "  ".join(f"{k} {v:.5f}" for k, v in rows[ppw].items()),
                  flush=True)
        fitted = levels[1:] if len(levels) > 3 else levels
        converged[name] = {}
        for key in rows[levels[0]]:
            fit = extrapolate([2.5 * p for p in fitted], [rows[p][key] for p in fitted])
            default = rows[levels[0]][key]
            converged[name][key] = fit["limit"]
            print(f"{name:<10} {key:<13} limit {fit['limit']:.5f} (order {fit['order']:.2f}"
                  f"{'' if fit['asymptotic'] else ', not asymptotic'}); default grid {default:.5f} "
                  f"{100 * (default / fit['limit'] - 1):+.2f}%", flush=True)
        if name == "grating":
            plain = {r: independent_grating(r) for r in (80, 120)}
            fit = extrapolate(list(plain), list(plain.values()))
            print(f"{name:<10} out-of-plane by a plain Meep script (blocks, Meep's source and add_flux): "
                  + ", ".join(f"{v:.5f} at {r} points/um" for r, v in plain.items())
                  + f"; limit {fit['limit']:.5f}, the package's {converged[name]['out-of-plane']:.5f} "
                  f"({100 * (converged[name]['out-of-plane'] / fit['limit'] - 1):+.2f}%)", flush=True)
            converged[name]["independent out-of-plane"] = fit["limit"]
        if "print" not in args:  # each texture's limits as soon as they are known
            known = json.loads(OUT.read_text()) if OUT.exists() else {"limits": {}, "levels": {}, "cases": {}}
            known.update({"period": PERIOD, "height": HEIGHT})
            known["levels"][name], known["limits"][name], known["cases"][name] = levels, converged[name], base
            OUT.write_text(json.dumps(known, indent=1) + "\n")
            print(f"wrote {name} to {OUT}", flush=True)


if __name__ == "__main__":
    main(sys.argv[1:])
