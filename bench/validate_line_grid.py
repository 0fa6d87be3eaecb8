"""Line sources on flat chips at the default grid against the exact answer, on and between grid rows.

For each chip index and depth it runs ``outcouple.run`` (isotropic line source, default grid: 16
points per chip wavelength, wavelength 1 um) with the emitter on a grid line and half a cell
deeper, and prints each orientation's efficiency against the exact planar value
(``references.planar`` through the result's ``reference``). The emitter's place in the cell
must not matter (the physics is translation invariant): the README's validation table quotes
this output. About 1 minute on 2 cores.

    .venv/bin/python bench/validate_line_grid.py
"""

import outcouple

CASES = [(2.0, 0.25), (2.5, 0.3), (2.5, 0.35), (3.5, 0.35)]
"""(chip index, emitter depth in um): the depths of bench/validate_point.py and of test_fdtd_flat.py."""


def main():
    print(f"{'n':>4} {'depth':>8} {'orientation':<13} {'FDTD':>8} {'exact':>8} {'diff':>8}")
    for index, depth in CASES:
        cell = 1.0 / round(16 * index)
        for shifted in (depth, depth + cell / 2):
            case = {"light": {"wavelength": 1.0}, "chip": {"index": index},
                    "emitter": {"depth": shifted, "orientation": "isotropic"}}
            result = outcouple.run(case, progress=False)
            exact = result.reference["by_orientation"]
            for orientation, value in result.by_orientation.items():
                print(f"{index:>4} {shifted:>8.5f} {orientation:<13} {value:>8.5f} {exact[orientation]:>8.5f} "
                      f"{100 * (value / exact[orientation] - 1):>+7.2f}%", flush=True)


if __name__ == "__main__":
    main()
