"""Point dipoles from two grids, extrapolated, against the exact 3-D dipole: the measured case for
making a second, coarser grid part of a point-source run.

At the default 16 points per chip wavelength the flat chips of bench/validate_point.py come out
+1.2% to +1.6% (combined) above the exact dipole, single dipoles up to +2%: the 2-D runs' grid
error, second order in the grid step (per-kz runs fit c + b / res^2 with c below 0.4%). Richardson
extrapolation (postprocess.convergence.extrapolate, order 2) from 12 and 16 points per wavelength
should remove the b / res^2 part at 1.42 times the cost of one run. This script runs each FLAT
case of validate_point.py as isotropic point dipoles at both grids and prints, per orientation
and combined, the two values, the extrapolated one and each against the exact 3-D solver.
About 8 minutes on 2 cores.

    .venv/bin/python bench/validate_point_two_grids.py            # the three flat cases
    .venv/bin/python bench/validate_point_two_grids.py "n = 2.5"  # cases whose name contains it
"""

import sys

import outcouple
from postprocess.convergence import extrapolate
from validate_point import FLAT, diff

LEVELS = (12.0, 16.0)
"""Points per chip wavelength of the two grids: the default and 3/4 of it (0.42 of its cost)."""


def main(args):
    cases = {k: v for k, v in FLAT.items() if not args or any(a in k for a in args)}
    print(f"{'case':<48} {'orientation':<13} " + " ".join(f"{f'{p:g} ppw':>15}" for p in LEVELS)
          + f" {'extrapolated':>18} {'exact':>8}")
    for name, data in cases.items():
        results = []
        for ppw in LEVELS:
            case = {**data, "emitter": {**data["emitter"], "orientation": "isotropic", "source": "point"},
                    "grid": {"points_per_wavelength": ppw}}
            results.append(outcouple.run(case, progress=False).to_dict())
        ref = results[-1]["reference"]
        resolutions = [r["grid_error"]["points_per_wavelength"] for r in results]
        for orientation in [*results[-1]["by_orientation"], "combined"]:
            values = [r["efficiency"] if orientation == "combined" else r["by_orientation"][orientation] for r in results]
            exact = ref["efficiency"] if orientation == "combined" else ref["by_orientation"][orientation]
            limit = extrapolate(resolutions, values)["limit"]
            print(f"{name:<48} {orientation:<13} " + " ".join(f"{v:.5f} {diff(v, exact):>7}" for v in values)
                  + f" {limit:>10.5f} {diff(limit, exact):>7} {exact:>8.5f}", flush=True)


if __name__ == "__main__":
    main(sys.argv[1:])
