"""Whole-process speed of ``outcouple run`` against a minimal hand-written Meep script of the same case.

Two flat cases (chip n = 3.3 in air at 0.85 µm, emitter 0.3 µm deep along z, on the mirror plane):
SMALL (the default grid, about 2 s of Meep time) and REALISTIC (24 points per wavelength and a
wider window, about 20 s). For each, in one run and alternating, PAIRS pairs of whole processes:

* the tool: ``python -m outcouple.cli run CASE.toml -o OUT.h5 --json --quiet`` (one job: run in
  that process, no worker; mirror symmetry, as the tool chooses for this case);
* the script: ``python HAND.py PARAMS.json``, plain Meep with the same cell, resolution, absorbing
  layers, source point, mirror symmetry (Mirror(X, phase=+1) for a z current on the plane),
  Meep's own flux monitors on the tool's eight monitor lines and the same stop rule.

Printed: the wall time of each process, their ratio per pair (goals: at most 1.25 on SMALL, 1.05
on REALISTIC), and where each process's time goes: start-up (a separate process that only
imports: ``outcouple.cli`` and the Meep job module for the tool, ``meep`` for the script), set-up
(the simulation built and initialised: epsilon averaging), time steps, and the rest (the tool:
checking the case, exact reference, post-processing, writing HDF5; the script: reading its
monitors). Both processes' efficiencies (top over emitted) are printed to show they solve the same
problem. Run with ``make bench`` or ``.venv/bin/python bench/bench_runner.py [small|realistic]``.
"""

import json
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import tomli_w

from fdtd_cases.case_file import parse_case
from fdtd_cases.layout import make_layout
from fdtd_cases.meep_job import MAX_RUN_CROSSINGS, monitor_lines

PAIRS = 3
BASE = {"light": {"wavelength": 0.85}, "ambient": {"index": 1.0}, "chip": {"index": 3.3},
        "emitter": {"depth": 0.3, "orientation": "out-of-plane"}}
CASES = {
    "small": {**BASE, "grid": {"width": 4.0}},
    "realistic": {**BASE, "grid": {"points_per_wavelength": 24, "width": 16.0}},
}
GOALS = {"small": 1.25, "realistic": 1.05}

HAND = r'''
import json, sys, time
started = time.perf_counter()
import meep as mp
import numpy as np
imported = time.perf_counter()
mp.verbosity(0)
import atexit
atexit.unregister(mp.report_elapsed_time)  # its exit-time print would follow our JSON line
p = json.load(open(sys.argv[1]))
chip = mp.Block(center=mp.Vector3(0, -p["big"] / 2), size=mp.Vector3(mp.inf, p["big"]),
                material=mp.Medium(index=p["chip"]))
sim = mp.Simulation(cell_size=mp.Vector3(p["cell_x"], p["cell_y"]), geometry_center=mp.Vector3(0, p["y_center"]),
                    resolution=p["resolution"], boundary_layers=[mp.PML(p["pml"])], geometry=[chip],
                    default_material=mp.Medium(index=p["ambient"]),
                    sources=[mp.Source(mp.GaussianSource(p["fcen"], fwidth=p["fwidth"]), component=mp.Ez,
                                       center=mp.Vector3(0, -p["depth"]))],
                    symmetries=[mp.Mirror(mp.X, phase=1)])
flux = {}
for name, ((x1, y1), (x2, y2), normal) in p["lines"].items():
    region = mp.FluxRegion(center=mp.Vector3((x1 + x2) / 2, (y1 + y2) / 2), size=mp.Vector3(x2 - x1, y2 - y1),
                           weight=-1.0 if normal.startswith("-") else 1.0)
    flux[name] = sim.add_flux(p["freqs"], region)
sim.init_sim()
set_up = time.perf_counter()
sim.run(until_after_sources=mp.stop_when_dft_decayed(tol=p["decay"], minimum_run_time=p["crossing"],
                                                     maximum_run_time=p["limit"]))
stepped = time.perf_counter()
f = {name: np.array(mp.get_fluxes(obj)) for name, obj in flux.items()}
emitted = sum(f[n] for n in ("contour_top", "contour_bottom", "contour_left", "contour_right"))
print(json.dumps({"efficiency": float(np.mean(f["top"] / emitted)), "steps": int(sim.fields.t),
                  "imports": imported - started, "setup": set_up - imported, "stepping": stepped - set_up,
                  "rest": time.perf_counter() - stepped}))
'''


def hand_params(case, layout):
    """What the hand-written script needs: the tool's own cell, monitors and stop rule."""
    crossing = case.chip.index * (layout.cell_x + layout.cell_y)
    return {"cell_x": layout.cell_x, "cell_y": layout.cell_y, "y_center": layout.y_center,
            "resolution": layout.resolution, "pml": layout.pml, "chip": case.chip.index,
            "ambient": case.ambient.index, "depth": layout.depth, "fcen": layout.fcen, "fwidth": layout.fwidth,
            "freqs": [float(f) for f in 1.0 / layout.wavelengths], "big": 2 * (layout.cell_x + layout.cell_y),
            "lines": monitor_lines(layout, 0.0), "decay": case.grid.decay, "crossing": crossing,
            "limit": 10.0 / layout.fwidth + MAX_RUN_CROSSINGS * crossing}


def timed(command):
    """(wall time in s, standard output) of one process."""
    started = time.perf_counter()
    done = subprocess.run(command, capture_output=True, text=True, check=True)
    return time.perf_counter() - started, done.stdout


def start_up(code):
    """Least wall time of three processes that only run ``code`` (imports)."""
    return min(timed([sys.executable, "-c", code])[0] for _ in range(3))


def measure(name, data, folder):
    case = parse_case(data, source=name)
    layout = make_layout(case, source=name)
    toml = folder / f"{name}.toml"
    toml.write_text(tomli_w.dumps(data))
    params = folder / f"{name}.json"
    params.write_text(json.dumps(hand_params(case, layout)))
    script = folder / "hand.py"
    script.write_text(HAND)
    tool_cmd = [sys.executable, "-m", "outcouple.cli", "run", str(toml), "-o", str(folder / f"{name}.h5"), "--json",
                "--quiet"]
    hand_cmd = [sys.executable, str(script), str(params)]
    pairs = []
    for _ in range(PAIRS):
        tool_wall, tool_out = timed(tool_cmd)
        hand_wall, hand_out = timed(hand_cmd)
        pairs.append((tool_wall, json.loads(tool_out), hand_wall, json.loads(hand_out)))
    tool_start = start_up("import outcouple.cli, fdtd_cases.meep_job")
    hand_start = start_up("import meep, numpy")
    ratios = [t / h for t, _, h, _ in pairs]
    print(f"\n{name}: resolution {layout.resolution:g}/um, cell {layout.cell_x:.3f} x {layout.cell_y:.3f} um, "
          f"{layout.grid_points:,} grid points, mirror symmetry")
    print(f"  {'pair':<6}{'tool s':>8}{'script s':>10}{'ratio':>8}")
    for i, (t, _, h, _) in enumerate(pairs):
        print(f"  {i + 1:<6}{t:>8.2f}{h:>10.2f}{t / h:>8.3f}")
    print(f"  median ratio {statistics.median(ratios):.3f} (goal at most {GOALS[name]})")
    tool_wall = statistics.median(t for t, _, _, _ in pairs)
    hand_wall = statistics.median(h for _, _, h, _ in pairs)
    job = min((p[1]["jobs"][0] for p in pairs), key=lambda j: j["wall_time"])
    hand = min((p[3] for p in pairs), key=lambda r: r["stepping"])
    rows = [("start-up (imports)", tool_start, hand_start),
            ("set-up", job["setup_time"], hand["setup"]),
            ("time steps", job["step_time"], hand["stepping"]),
            ("the rest", tool_wall - tool_start - job["setup_time"] - job["step_time"],
             hand_wall - hand_start - hand["setup"] - hand["stepping"])]
    print(f"  where the time goes (median process, fastest job): {'tool s':>8}{'script s':>10}")
    for label, a, b in rows:
        print(f"  {label:<46}{a:>8.2f}{b:>10.2f}")
    print(f"  time steps: tool {job['time_steps']}, script {hand['steps']}")
    print(f"  efficiency top/emitted: tool {pairs[-1][1]['efficiency']:.5f}, script {hand['efficiency']:.5f}")


def main(names):
    with tempfile.TemporaryDirectory() as folder:
        for name in names or list(CASES):
            measure(name, CASES[name], Path(folder))


if __name__ == "__main__":
    main(sys.argv[1:])
