"""The demo: a gratinged die against the same die flat: budget, light into a lens, pictures, reports.

Run with ``make demo``; writes demo_output/ (result files, structure.png, spectrum.png,
farfield.png and one HTML report per die).
"""

import json
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
OUT = HERE.parent / "demo_output"


LENS_NA = 0.5
"""Numerical aperture of the (invented) collection lens above the die."""


def outcouple(*args):
    done = subprocess.run([sys.executable, "-m", "outcouple.cli", *map(str, args)], stdout=subprocess.PIPE, text=True)
    if done.returncode:
        sys.exit(done.returncode)
    return done.stdout


def run(case):
    result = OUT / (case.stem + ".h5")
    summary = json.loads(outcouple("run", case, "-o", result, "--json", "--fields", "--na", LENS_NA))
    outcouple("report", result, "--na", LENS_NA)
    return summary


def main():
    from fdtd_cases.case_file import load_case
    from fdtd_cases.layout import make_layout
    from postprocess.plots import plot_farfield, plot_spectra, plot_structure

    OUT.mkdir(exist_ok=True)
    started = time.perf_counter()
    grating, flat = HERE / "demo_grating.toml", HERE / "demo_flat.toml"
    summaries = {}
    for case in (flat, grating):
        print(f"== {case.name}", flush=True)
        summaries[case.stem] = run(case)
    print(f"\n{'case':<14} {'LEE':>7} {'top':>7} {'bottom':>7} {'sides':>7} {'absorbed':>8} {'balance':>8}"
          f" {'exact':>7}")
    for name, s in summaries.items():
        b = s["budget"]
        exact = f"{s['reference']['efficiency']:.4f}" if "reference" in s else "-"
        print(f"{name:<14} {s['efficiency']:>7.4f} {b['top']:>7.4f} {b['bottom']:>7.4f} {b['sides']:>7.4f} "
              f"{b['absorbed']:>8.4f} {s['balance_error']:>8.4f} {exact:>7}")
    gain = summaries["demo_grating"]["efficiency"] / summaries["demo_flat"]["efficiency"]
    print(f"\ngrating / flat extraction: {gain:.2f}x")
    for name, s in summaries.items():
        c = s["collection"]
        print(f"{name}: into a lens of NA {LENS_NA} (+/-{c['half_angle']:.0f} deg): {s['collected']:.4f} of the emitted "
              f"power ({c['of_escaped']:.0%} of what escapes; a Lambertian die would put {c['lambertian']:.4f} there)")
    bounds = json.loads(outcouple("reference", grating, "--json"))
    rays = json.loads(outcouple("rays", grating, "--json", "--quiet"))
    print(f"ray optics on the same grating die (outcouple rays): {rays['efficiency']:.4f} +/- "
          f"{rays['statistical_error']:.4f}, against {summaries['demo_grating']['efficiency']:.4f} full wave: "
          "at a period of two chip wavelengths, diffraction matters")
    print(f"bounds for the grating die (outcouple reference, no FDTD): flat surface, exact "
          f"{bounds['efficiency']:.4f}; an ideal randomising top over the same chip "
          f"{bounds['randomising_bound']['line_emitter']:.4f} (line emitter), "
          f"{bounds['randomising_bound']['point_dipole']:.4f} (point dipole)")
    case, _ = load_case(grating)
    plot_structure(make_layout(case), case.emitter.x, OUT / "structure.png", "demo: grating die (period 0.42 µm)")
    plot_spectra([("flat", summaries["demo_flat"]), ("grating", summaries["demo_grating"])], OUT / "spectrum.png")
    grating_summary = summaries["demo_grating"]
    plot_farfield(grating_summary["farfield"], OUT / "farfield.png", collection=grating_summary["collection"]["half_angle"],
                  title="demo: far field of the grating die")
    print(f"pictures: {OUT / 'structure.png'}, {OUT / 'spectrum.png'}, {OUT / 'farfield.png'}")
    print(f"reports: {OUT / 'demo_flat.html'}, {OUT / 'demo_grating.html'}   ({time.perf_counter() - started:.0f} s)")


if __name__ == "__main__":
    main()
