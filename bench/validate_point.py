"""Point sources at the default grid and node count against the exact 3-D dipole (a few minutes).

Prints, per case and orientation, the FDTD point-dipole efficiency (kz-integrated 2-D runs),
the exact planar value (references.multilayer, dim=3) and their difference, then the same for
the line source of the same case, which shows how much of the difference the 2-D runs
themselves carry at this grid. The README quotes its output.

    .venv/bin/python bench/validate_point.py
"""

import time

import outcouple

CASES = {
    "flat n = 2.0, dipole 0.25 um deep": {
        "light": {"wavelength": 1.0}, "chip": {"index": 2.0}, "emitter": {"depth": 0.25}},
    "flat n = 2.5, dipole 0.3 um deep": {
        "light": {"wavelength": 1.0}, "chip": {"index": 2.5}, "emitter": {"depth": 0.3}},
    "quarter-wave film (n 1.58, 0.158 um) on n = 2.5": {
        "light": {"wavelength": 1.0}, "chip": {"index": 2.5}, "film": [{"index": 1.58, "thickness": 0.158}],
        "emitter": {"depth": 0.3}},
}


def diff(a, b):
    return f"{100 * (a / b - 1):+.2f}%"


def main():
    print(f"{'case':<50} {'orientation':<13} {'source':<6} {'runs':>5} {'FDTD':>8} {'exact':>8} {'diff':>8}")
    for name, data in CASES.items():
        for source in ("point", "line"):
            case = {**data, "emitter": {**data["emitter"], "orientation": "isotropic", "source": source}}
            started = time.perf_counter()
            result = outcouple.run(case, progress=False).to_dict()
            ref = result["reference"]
            runs = sum(j.get("kz_runs", 1) for j in result["jobs"])
            for orientation, value in [*result["by_orientation"].items(), ("combined", result["efficiency"])]:
                exact = ref["efficiency"] if orientation == "combined" else ref["by_orientation"][orientation]
                print(f"{name:<50} {orientation:<13} {source:<6} {runs:>5} {value:>8.5f} {exact:>8.5f} "
                      f"{diff(value, exact):>8}", flush=True)
            print(f"{'':<50} {'':<13} {source:<6} emission factor {result['emission_factor']:.4f} "
                  f"(exact {ref['emission_factor']:.4f}), {time.perf_counter() - started:.0f} s", flush=True)


if __name__ == "__main__":
    main()
