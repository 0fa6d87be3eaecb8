"""Benchmark the Meep job runner against a minimal hand-written Meep script.

On one flat case (0.85 µm, chip index 3.3 in air, emitter 0.3 µm deep,
out-of-plane orientation, default grid) this measures the wall time of

1. ``fdtd_cases.meep_job.run_job`` without the mirror symmetry,
2. the same with ``symmetric=True`` (Meep then updates only half the cell),
3. a hand-written Meep script of the same problem: same cell, resolution,
   PML, source and stop rule, flux monitors only on the same lines (no DFT
   field saving, no LDOS).

Each variant runs twice, sequentially in this process; the minimum wall time
is kept to reduce noise. The table gives time steps, grid points and
grid-point updates per second, then the ratios tool / hand-written (goal
<= 1.05) and tool without / with symmetry (goal about 2), and the
extraction efficiency (top / emitted) of the tool and hand-written runs
(plus the exact half-space value), to show both solve the same problem. The
tool builds the chip as an ``mp.Prism`` and this script as an ``mp.Block``;
with the surface on a grid line Meep's subpixel averaging of the two differs,
which moves the efficiency by a few percent.

Run with ``make bench`` or ``.venv/bin/python bench/bench_runner.py``.
"""

import time
import warnings

# numpy warns about "smallest subnormal" on some CPUs when imported by Meep; harmless.
warnings.filterwarnings("ignore", message=".*smallest subnormal.*", category=UserWarning)

import meep as mp  # noqa: E402
import numpy as np  # noqa: E402

from fdtd_cases.case_file import parse_case  # noqa: E402
from fdtd_cases.layout import make_layout  # noqa: E402
from fdtd_cases.meep_job import MAX_RUN_CROSSINGS, monitor_lines, run_job  # noqa: E402
from postprocess.budget import CONTOUR, job_fluxes  # noqa: E402
from references.planar import half_space  # noqa: E402

ORIENTATION = "out-of-plane"
REPEATS = 2
CASE = {
    "light": {"wavelength": 0.85},
    "ambient": {"index": 1.0},
    "chip": {"index": 3.3},
    "surface": {"pattern": "flat"},
    "emitter": {"depth": 0.3, "orientation": ORIENTATION},
}


def hand_written(case, layout):
    """Run the case with plain Meep calls and flux monitors only.

    Returns
    -------
    dict
        ``time_steps`` and ``efficiency`` (Meep flux top / emitted, per wavelength).
    """
    freqs = list(1.0 / layout.wavelengths)
    # A Block filling y < 0 is the flat chip; it reaches past the cell so no edge shows.
    big = 2 * (layout.cell_x + layout.cell_y)
    chip = mp.Block(center=mp.Vector3(0, -big / 2), size=mp.Vector3(mp.inf, big),
                    material=mp.Medium(index=case.chip.index))
    sim = mp.Simulation(
        cell_size=mp.Vector3(layout.cell_x, layout.cell_y),
        geometry_center=mp.Vector3(0, layout.y_center),
        resolution=layout.resolution,
        boundary_layers=[mp.PML(layout.pml)],
        geometry=[chip],
        default_material=mp.Medium(index=case.ambient.index),
        sources=[mp.Source(mp.GaussianSource(layout.fcen, fwidth=layout.fwidth), component=mp.Ez,
                           center=mp.Vector3(0, -layout.depth))],
    )
    flux = {}
    for name, ((x1, y1), (x2, y2), normal) in monitor_lines(layout, 0.0).items():
        # Weight -1 on the -x / -y sides makes every flux outward, as in run_job.
        region = mp.FluxRegion(center=mp.Vector3((x1 + x2) / 2, (y1 + y2) / 2),
                               size=mp.Vector3(x2 - x1, y2 - y1), weight=-1.0 if normal[0] == "-" else 1.0)
        flux[name] = sim.add_flux(freqs, region)
    # Same stop rule and arguments as run_job, so both runs last comparably long.
    crossing = case.chip.index * (layout.cell_x + layout.cell_y)
    limit = 10.0 / layout.fwidth + MAX_RUN_CROSSINGS * crossing
    sim.run(until_after_sources=mp.stop_when_dft_decayed(
        tol=case.grid.decay, minimum_run_time=crossing, maximum_run_time=limit))
    fluxes = {name: np.array(mp.get_fluxes(obj)) for name, obj in flux.items()}
    emitted = sum(fluxes[name] for name in CONTOUR)
    return {"time_steps": int(sim.fields.t), "efficiency": fluxes["top"] / emitted}


def best_of(run):
    """Minimum wall time over ``REPEATS`` calls of ``run`` and the last call's result."""
    times = []
    for _ in range(REPEATS):
        started = time.perf_counter()
        result = run()
        times.append(time.perf_counter() - started)
    return min(times), result


def main():
    """Run the three variants and print the table, ratios and efficiencies."""
    mp.verbosity(0)
    case = parse_case(CASE, source="bench")
    layout = make_layout(case, source="bench")
    points = layout.grid_points
    variants = {
        "tool, no symmetry": lambda: run_job(case, layout, ORIENTATION, 0.0, symmetric=False),
        "tool, symmetric *": lambda: run_job(case, layout, ORIENTATION, 0.0, symmetric=True),
        "hand-written": lambda: hand_written(case, layout),
    }
    rows = {name: best_of(run) for name, run in variants.items()}

    print(f"\ncase: flat, 0.85 um, n = 3.3 / 1.0, depth 0.3 um, {ORIENTATION}; resolution "
          f"{layout.resolution:g}/um, cell {layout.cell_x:.3f} x {layout.cell_y:.3f} um; "
          f"best of {REPEATS} runs")
    print(f"{'variant':<20}{'wall s':>9}{'steps':>8}{'grid pts':>10}{'updates/s':>12}")
    for name, (wall, result) in rows.items():
        steps = result["time_steps"]
        print(f"{name:<20}{wall:>9.2f}{steps:>8d}{points:>10d}{points * steps / wall:>12.3g}")
    print("* Meep updates only half the cell with the mirror symmetry; its updates/s is the "
          "full-cell equivalent (full grid points x steps / wall time).")

    tool, sym, hand = (rows[name][0] for name in variants)
    print(f"\ntool / hand-written          = {tool / hand:.3f}  (goal <= 1.05)")
    print(f"tool no symmetry / symmetric = {tool / sym:.3f}  (goal about 2)")

    tool_run = rows["tool, no symmetry"][1]
    fluxes = job_fluxes(tool_run["lines"], layout.resolution)
    eff_tool = float(np.mean(fluxes["top"] / fluxes["emitted"]))
    # The tool's own Meep flux monitors compare like for like with the hand-written run.
    meep_flux = run_job(case, layout, ORIENTATION, 0.0, symmetric=False, cross_check=True)["meep_flux"]  # untimed
    eff_tool_meep = float(np.mean(meep_flux["top"] / sum(meep_flux[name] for name in CONTOUR)))
    eff_hand = float(np.mean(rows["hand-written"][1]["efficiency"]))
    exact = half_space(case.chip.index, case.ambient.index, case.emitter.depth, case.light.wavelength,
                       ORIENTATION)["efficiency"]
    print("\nefficiency top/emitted:")
    for name, value in (("tool (DFT line fields)", eff_tool), ("tool (Meep flux)", eff_tool_meep),
                        ("hand-written (Meep flux)", eff_hand), ("exact half-space", exact)):
        print(f"  {name:<26}{value:.5f}  ({value / eff_hand - 1:+.2%} vs hand-written)")


if __name__ == "__main__":
    main()
