"""Point sources at the default grid and node count against the exact 3-D dipole, and what they cost.

Prints, per case and orientation, the FDTD point-dipole efficiency (kz-integrated 2-D runs),
the exact planar value (references.multilayer, dim=3) and their difference, then the same for
the line source of the same case, which shows how much of the difference the 2-D runs
themselves carry at this grid. After each source: its kz runs, elapsed time, the summed wall
time of its runs, the slowest run (dipole, kz) and the runs that hit the run-time limit
instead of stopping by field decay. The README quotes its output.

Two groups of cases: FLAT (three flat chips without guided modes, about 5 minutes in all on
2 cores) and GUIDED (a thin n = 2.0 chip, 0.35 um, dipole at mid-depth, on an n = 1.5
substrate: 2 guided modes at 1 um, 78 kz runs, about 9 minutes on 2 cores; the runs next to
the guided modes' effective indices still end at the run-time limit). Arguments choose cases:
a group name, or a part of a case's name; none runs all.

    .venv/bin/python bench/validate_point.py             # everything
    .venv/bin/python bench/validate_point.py guided      # the guided-mode chips only
    .venv/bin/python bench/validate_point.py "n = 2.5"   # cases whose name contains "n = 2.5"
    .venv/bin/python bench/validate_point.py flat ppw=24 # a finer grid than the default 16
    .venv/bin/python bench/validate_point.py flat width=16  # a wider domain (grid.width, um)
    .venv/bin/python bench/validate_point.py flat one-grid  # without the second grid (grid.extrapolate)

Point sources run on two grids by default (grid.extrapolate): the FDTD column is the extrapolated
value, and "finer" the finer grid's own (the default resolution alone).
"""

import sys
import tempfile
import time
from pathlib import Path

import outcouple
from postprocess.results import read_results

FLAT = {
    "flat n = 2.0, dipole 0.25 um deep": {
        "light": {"wavelength": 1.0}, "chip": {"index": 2.0}, "emitter": {"depth": 0.25}},
    "flat n = 2.5, dipole 0.3 um deep": {
        "light": {"wavelength": 1.0}, "chip": {"index": 2.5}, "emitter": {"depth": 0.3}},
    "quarter-wave film (n 1.58, 0.158 um) on n = 2.5": {
        "light": {"wavelength": 1.0}, "chip": {"index": 2.5}, "film": [{"index": 1.58, "thickness": 0.158}],
        "emitter": {"depth": 0.3}},
}

# Thinner chips than this leave no room for the emitter's flux contour at mid-depth; thicker ones
# hold more guided modes, hence more kz pieces (0.8 um on a mirror: 6 modes, 138 runs). The same
# chip on a perfect mirror is refused for point sources: its kz runs diverged (fields of 1e17).
GUIDED = {
    "0.35 um of n = 2.0 on n = 1.5, 0.175 um deep": {
        "light": {"wavelength": 1.0},
        "chip": {"index": 2.0, "thickness": 0.35, "back": "substrate", "back_index": 1.5},
        "emitter": {"depth": 0.175}},
}

GROUPS = {"flat": FLAT, "guided": GUIDED}


def diff(a, b):
    return f"{100 * (a / b - 1):+.2f}%"


def chosen(args):
    """The cases named by ``args`` (group names or parts of case names); all without arguments."""
    every = {**FLAT, **GUIDED}
    if not args:
        return every
    picked = {name: data for arg in args for name, data in GROUPS.get(arg, {}).items()}
    picked.update({name: data for name, data in every.items() if any(arg in name for arg in args)})
    if not picked:
        sys.exit(f"no case matches {args}; groups: {', '.join(GROUPS)}")
    return {name: data for name, data in every.items() if name in picked}


def cost(runs, elapsed):
    """One line on what the runs of one source cost (``runs``: the jobs of its result file)."""
    slowest = max(runs, key=lambda r: r["wall_time"])
    where = f"{slowest['orientation']}" + (f", kz = {slowest['kz']:.4f} k0" if "kz" in slowest else "")
    limited = [r for r in runs if not r["stopped_by_decay"]]
    hits = ", ".join(f"{r['orientation']} {r['kz']:.3f}" if "kz" in r else r["orientation"] for r in limited)
    return (f"{len(runs)} runs, {elapsed:.0f} s elapsed, {sum(r['wall_time'] for r in runs):.0f} s summed; "
            f"slowest {slowest['wall_time']:.0f} s ({where}); {len(limited)} hit the run-time limit"
            + (f" ({hits})" if hits else ""))


def main(args):
    grid = {}
    if "one-grid" in args:
        grid["extrapolate"] = False
        args = [a for a in args if a != "one-grid"]
    for arg in [a for a in args if a.startswith(("ppw=", "width="))]:
        key, value = arg.split("=")
        grid[{"ppw": "points_per_wavelength", "width": "width"}[key]] = float(value)
        args = [a for a in args if a != arg]
    print(f"{'case':<50} {'orientation':<13} {'source':<6} {'runs':>5} {'FDTD':>8} {'exact':>8} {'diff':>8} "
          f"{'finer':>8} {'diff':>8}")
    for name, data in chosen(args).items():
        for source in ("point", "line"):
            case = {**data, "emitter": {**data["emitter"], "orientation": "isotropic", "source": source}, "grid": grid}
            with tempfile.TemporaryDirectory() as folder:
                output = Path(folder) / "result.h5"
                started = time.perf_counter()
                result = outcouple.run(case, progress=False, output=output).to_dict()
                elapsed = time.perf_counter() - started
                runs = read_results(output)["jobs"]
            ref = result["reference"]
            grids = result.get("grids")
            for orientation, value in [*result["by_orientation"].items(), ("combined", result["efficiency"])]:
                exact = ref["efficiency"] if orientation == "combined" else ref["by_orientation"][orientation]
                finer = ""
                if grids:
                    own = grids["efficiency" if orientation == "combined" else "by_orientation"]
                    own = own[0] if orientation == "combined" else own[orientation][0]
                    finer = f" {own:>8.5f} {diff(own, exact):>8}"
                print(f"{name:<50} {orientation:<13} {source:<6} {len(runs):>5} {value:>8.5f} {exact:>8.5f} "
                      f"{diff(value, exact):>8}{finer}", flush=True)
            if grids:
                print(f"{'':<50} {'':<13} {source:<6} grids {grids['resolution'][0]:g} and "
                      f"{grids['resolution'][1]:g} points/um, wall time {grids['wall_time'][0]:.0f} and "
                      f"{grids['wall_time'][1]:.0f} s summed", flush=True)
            print(f"{'':<50} {'':<13} {source:<6} emission factor {result['emission_factor']:.4f} "
                  f"(exact {ref['emission_factor']:.4f})", flush=True)
            print(f"{'':<50} {'':<13} {source:<6} {cost(runs, elapsed)}", flush=True)


if __name__ == "__main__":
    main(sys.argv[1:])
