"""Point dipole under a 1-D grating: the package's kz integral against a full 3-D Meep run.

What it compares. One small case: an n = 2.0 chip, semi-infinite, under air; a grating of
period 0.8 um, etch depth 0.2 um, fill 0.5 (a ridge centred on x = 0); a point dipole at
x = 0, 0.5 um deep; wavelength 1.0 um; grid.resolution 20 (10 points per wavelength in the
chip: coarse, the package warns); grid.width 4.0 um. For each dipole direction it computes the
extraction efficiency LEE = P_top / P_emitted

* with a full 3-D Meep simulation built here (not by the package): the chip as a Block below
  y = -height, the ridges as Blocks of infinite z length, the same resolution, PML thickness, x
  width and y layout as the package's 2-D runs (fdtd_cases.layout.make_layout), z extent
  2 * Z_HALF plus PML; mirror symmetries in x and z (checked against an unsymmetric run, below);
  P_emitted through a closed box around the dipole (the package's contour, the same half-width
  in z), P_top through a plane at the package's top-monitor height y_top spanning the domain
  inside the PML in x and z; Gaussian pulse and a DFT-decay stop rule like the package's;
* with ``outcouple.run`` on the same case as ``source = "point"`` (2-D runs integrated over kz,
  the top monitor infinite in z by construction).

It also prints both emitted powers divided by the bulk power n w^2 |I|^2 / (6 pi) of the dipole
(postprocess/budget.py; |I| from Meep's ldos_Jdata) and the exact flat-surface value
(``outcouple.reference``) for context, and reruns one orientation with a longer z extent.

Run (about 2.5 minutes at the default resolution 20, on one core shared with another Meep job;
resolution 30 takes about 2, 2 and 3 minutes for the three orientations):

    .venv/bin/python bench/validate_grating_3d.py
    .venv/bin/python bench/validate_grating_3d.py --resolution 30 --orientations normal --check-z-half 0

Out-of-plane (z) dipole: Ez lives half a cell off z = 0 on Meep's Yee grid, so a 3-D source at
z = 0 is spread over the two nearest Ez points, a dipole one cell long whose kz spectrum falls
as cos(kz dz / 2) (0.95 in amplitude at kz = 2 k0 here); the kz runs have no such factor (z is
exact there). The script therefore puts that source on an Ez point, z = dz / 2, and runs it with
the x mirror only. Centred at z = 0 (``--ez-at-zero``) the 3-D run gave LEE 0.12814 and emitted
0.9923 of bulk at resolution 20, Z_HALF = 6: package -2.3% and +2.8% instead of -1.0% and +0.7%.

Output here (Meep 1.25, 2 cores shared with another Meep job; diff = package / 3-D - 1), after
the package built gratings as blocks (fdtd_cases.meep_job.chip_objects), 2026-12-03:

    resolution 20; width 4 (+ PML 1); top plane at y = 0.6; 3-D cell 6 x 3.9 x 14
    orientation   z half  3-D LEE  pkg LEE    diff 3-D emit pkg emit    diff     flat  3-D s  pkg s kz runs
    parallel           6  0.11477  0.11618  +1.23%   0.9956   0.9848  -1.09%  0.07773     17     17      15
    normal             6  0.02089  0.02095  +0.28%   1.0291   1.0187  -1.02%  0.01203     15     19      15
    out-of-plane       6  0.12647  0.12511  -1.07%   1.0124   1.0205  +0.79%  0.07773     33     17      15
    normal             9  0.02089  0.02095  +0.25%   1.0291   1.0187  -1.02%  0.01203     22     19      15

The normal dipole's gap of the runs below (+3.9%) was the package's polygon, not the 3-D run's
z grid: edges on grid lines are not enough for Meep 1.25 to average a prism's corners like a
block's. Earlier, with the package's polygon, after both runs placed the dipole on its own grid
points in x and y (fdtd_cases.meep_job.source_points):

    resolution 20; width 4 (+ PML 1); top plane at y = 0.6; 3-D cell 6 x 3.9 x 14
    orientation   z half  3-D LEE  pkg LEE    diff 3-D emit pkg emit    diff     flat  3-D s  pkg s kz runs
    parallel           6  0.11477  0.11510  +0.29%   0.9956   0.9789  -1.67%  0.07773     18     26      15
    normal             6  0.02089  0.02171  +3.94%   1.0291   1.0139  -1.48%  0.01203     17     24      15
    out-of-plane       6  0.12647  0.12520  -1.00%   1.0124   1.0198  +0.72%  0.07773     46     25      15
    normal             9  0.02089  0.02171  +3.91%   1.0291   1.0139  -1.48%  0.01203     33     24      15

Before that change (Meep's own two-point spreading of the normal and parallel dipoles), and the
discussion below, which it does not alter (the normal dipole's gap at 20 stays):

    resolution 20; width 4 (+ PML 1); top plane at y = 0.6; 3-D cell 6 x 3.9 x 14
    orientation   z half  3-D LEE  pkg LEE    diff 3-D emit pkg emit    diff     flat  3-D s  pkg s kz runs
    parallel           6  0.11534  0.11582  +0.41%   0.9777   0.9607  -1.74%  0.07773     18     22      15
    normal             6  0.02000  0.02082  +4.09%   1.0103   0.9948  -1.53%  0.01203     15     21      15
    out-of-plane       6  0.12647  0.12520  -1.00%   1.0124   1.0198  +0.72%  0.07773     33     18      15
    normal             9  0.02001  0.02082  +4.06%   1.0103   0.9948  -1.53%  0.01203     21     21      15

    resolution 30 (run one orientation at a time)
    parallel           6  0.11379  0.11334  -0.39%   0.9622   0.9574  -0.50%  0.07773     60     46      15
    normal             6  0.02055  0.02080  +1.23%   0.9978   0.9937  -0.41%  0.01203     62     50      15
    out-of-plane       6  0.12688  0.12638  -0.39%   0.9831   0.9901  +0.71%  0.07773    131     47      15

At resolution 20 (10 points per wavelength in the chip) parallel and out-of-plane agree within
1%, emitted powers within 2%, and the normal dipole does not: the package is 4.1% above the
3-D run. The cause is the 3-D reference's own grid error, not the kz method. The two share the
x-y grid and differ only in z: finite differences in 3-D, an exact Bloch phase exp(i kz z) in
the kz runs. The normal dipole's small LEE (2%, against 1.2% under a flat surface) is the most
sensitive. The normal 3-D LEE climbs with resolution towards the package's: 0.02000, 0.02055 at
20, 30 (Z_HALF = 6) and 0.02075 at 40 (Z_HALF = 4, package 0.02090: +0.75%); Richardson from 20
and 30 gives 0.0210. The package's own normal value moves by under 0.5% over 20-40 (0.02082,
0.02080, 0.02090), and more kz nodes raise it by 0.5% (kz_nodes 8: 0.02092) and 0.7% (16:
0.02096). At resolution 30 all three agree within 1.3%. Parallel moves by 1.5-2% in both from
20 to 30, so the agreement there is as good as either grid allows.

Other checks. Mirror symmetries: both mirrors against an unsymmetric run (resolution 16, width
2, depth 0.6, Z_HALF 1, all three orientations): LEE and emitted power equal to 1e-7. z extent
(resolution 20): parallel LEE 0.11207, 0.11510, 0.11534, 0.11538 for Z_HALF = 2, 4, 6, 8; normal
0.01867, 0.01991, 0.02000, 0.02001 for 2, 4, 6, 9; out-of-plane (source at z = 0) 0.12393,
0.12796, 0.12814 for 2, 4, 6. At Z_HALF = 6 the finite z extent costs under 0.1% (the top plane
misses light that leaves at large |z|; the kz integral has no such cut); at Z_HALF = 2 (the x
half-width) it costs 3-7%. Stop rule: tolerance 1e-9 instead of 1e-6 changed the 3-D LEE by
4e-7. The grating's edges (x = +-0.2 + 0.8 k, y = -0.2) lie on grid lines at resolutions 20,
30 and 40; the package's polygon (mp.Prism) was still averaged differently from the Blocks here
(see above); the package now builds gratings as Blocks too.
"""

import argparse
import time
import warnings

warnings.filterwarnings("ignore", message="The value of the smallest subnormal")

import meep as mp  # noqa: E402
import numpy as np  # noqa: E402

import outcouple  # noqa: E402
from fdtd_cases.layout import make_layout  # noqa: E402
from fdtd_cases.meep_job import source_points  # noqa: E402

RESOLUTION = 20
WIDTH = 4.0
"""grid.width: x extent inside the PML (5 periods), the same in both."""
Z_HALF = 6.0
"""Half the 3-D z extent inside the PML, um."""
CHECK_Z_HALF = 9.0
"""The longer z extent of the extra run (orientation CHECK_ORIENTATION)."""
CHECK_ORIENTATION = "normal"
TOLERANCE = 1e-7
"""DFT-decay tolerance of the 3-D runs."""
ORIENTATIONS = ("parallel", "normal", "out-of-plane")

SOURCE = {"parallel": mp.Ex, "normal": mp.Ey, "out-of-plane": mp.Ez}
PHASES = {"parallel": (-1, 1), "normal": (1, 1), "out-of-plane": (1, -1)}
"""Mirror phases (x, z) of the fields of a dipole at x = 0, z = 0."""


def case_dict(resolution, orientation, flat=False):
    surface = {"pattern": "flat"} if flat else {"pattern": "grating", "period": 0.8, "height": 0.2, "fill": 0.5}
    return {"light": {"wavelength": 1.0}, "chip": {"index": 2.0}, "surface": surface,
            "emitter": {"depth": 0.5, "orientation": orientation, "source": "point"},
            "grid": {"resolution": resolution, "width": WIDTH}}


def _flux(sim, freqs, center, size, weight=1.0):
    return sim.add_flux(freqs, mp.FluxRegion(center=mp.Vector3(*center), size=mp.Vector3(*size), weight=weight))


def run_3d(data, orientation, z_half, ez_at_zero=False):
    """The 3-D Meep run of one dipole: LEE, emitted power over bulk power, wall time."""
    started = time.perf_counter()
    mp.verbosity(0)
    layout = make_layout(outcouple.load_case(data))
    surface, n = data["surface"], data["chip"]["index"]
    height, period, ridge = surface["height"], surface["period"], surface["fill"] * surface["period"]
    chip = mp.Medium(index=n)
    bottom = layout.y_cell_bottom - 1.0
    geometry = [mp.Block(center=mp.Vector3(0, (bottom - height) / 2), size=mp.Vector3(mp.inf, -height - bottom, mp.inf),
                         material=chip)]
    reach = int(np.ceil(layout.cell_x / 2 / period)) + 1
    geometry += [mp.Block(center=mp.Vector3(k * period, -height / 2), size=mp.Vector3(ridge, height, mp.inf),
                          material=chip) for k in range(-reach, reach + 1)]

    # An Ez source at z = 0 would be spread over the Ez points at z = +-dz/2 (see the docstring).
    off_grid = orientation == "out-of-plane" and not ez_at_zero
    z_source = 0.5 / layout.resolution if off_grid else 0.0
    px, pz = PHASES[orientation]
    symmetries = [mp.Mirror(mp.X, phase=px)] + ([] if off_grid else [mp.Mirror(mp.Z, phase=pz)])
    freq = 1.0 / data["light"]["wavelength"]
    # In x and y the 3-D Yee grid keeps Ex, Ey and Ez where the 2-D one does: the package's stencil
    # puts the dipole on its own grid points there too (fdtd_cases.meep_job.source_points).
    pulse = mp.GaussianSource(layout.fcen, fwidth=layout.fwidth)
    sim = mp.Simulation(
        cell_size=mp.Vector3(layout.cell_x, layout.cell_y, 2 * (z_half + layout.pml)),
        geometry_center=mp.Vector3(0, layout.y_center, 0),
        resolution=layout.resolution,
        boundary_layers=[mp.PML(layout.pml)],
        geometry=geometry,
        default_material=mp.Medium(index=1.0),
        sources=[mp.Source(pulse, component=SOURCE[orientation], center=mp.Vector3(x, y, z_source), amplitude=weight)
                 for x, y, weight in source_points(orientation, 0.0, -layout.depth, layout.resolution)],
        symmetries=symmetries,
    )
    xl, xr, yl, yh = layout.contour_box(0.0)
    c, y0, w, h = layout.contour, -layout.depth, xr - xl, yh - yl
    box = [_flux(sim, [freq], (0, yh, 0), (w, 0, 2 * c)), _flux(sim, [freq], (0, yl, 0), (w, 0, 2 * c), -1),
           _flux(sim, [freq], (xr, y0, 0), (0, h, 2 * c)), _flux(sim, [freq], (xl, y0, 0), (0, h, 2 * c), -1),
           _flux(sim, [freq], (0, y0, c), (w, h, 0)), _flux(sim, [freq], (0, y0, -c), (w, h, 0), -1)]
    top = _flux(sim, [freq], (0, layout.y_top, 0), (2 * layout.x_side, 0, 2 * z_half))
    crossing = n * (layout.cell_x + layout.cell_y)
    sim.run(mp.dft_ldos([freq]), until_after_sources=mp.stop_when_dft_decayed(
        tol=TOLERANCE, minimum_run_time=crossing, maximum_run_time=400))
    emitted = sum(mp.get_fluxes(f)[0] for f in box)
    current = abs(np.array(sim.ldos_Jdata)[0])
    bulk = n * (2 * np.pi * freq) ** 2 * current ** 2 / (6 * np.pi)
    return {"lee": mp.get_fluxes(top)[0] / emitted, "emission": emitted / bulk,
            "seconds": time.perf_counter() - started}


def run_package(data):
    started = time.perf_counter()
    result = outcouple.run(data, workers=1, progress=False).to_dict()
    return {"lee": result["by_orientation"][data["emitter"]["orientation"]], "emission": result["emission_factor"],
            "runs": sum(j.get("kz_runs", 1) for j in result["jobs"]), "seconds": time.perf_counter() - started}


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--resolution", type=float, default=RESOLUTION)
    parser.add_argument("--z-half", type=float, default=Z_HALF, help="half the 3-D z extent inside the PML, um")
    parser.add_argument("--check-z-half", type=float, default=CHECK_Z_HALF, help="0: no extra z-extent run")
    parser.add_argument("--orientations", nargs="+", default=list(ORIENTATIONS), choices=ORIENTATIONS)
    parser.add_argument("--ez-at-zero", action="store_true", help="out-of-plane 3-D source at z = 0 (off the Ez grid)")
    args = parser.parse_args()

    layout = make_layout(outcouple.load_case(case_dict(args.resolution, "parallel")))
    flat = outcouple.reference(case_dict(args.resolution, "isotropic", flat=True))["point_dipole"]["by_orientation"]
    print(f"grating period 0.8, height 0.2, fill 0.5 on n = 2.0; dipole 0.5 um deep; wavelength 1.0; "
          f"resolution {args.resolution:g}; width {layout.width:g} (+ PML {layout.pml:g}); top plane at y = "
          f"{layout.y_top:g}; 3-D cell {layout.cell_x:g} x {layout.cell_y:g} x {2 * (args.z_half + layout.pml):g}")
    print(f"{'orientation':<13} {'z half':>6} {'3-D LEE':>8} {'pkg LEE':>8} {'diff':>7} {'3-D emit':>8} "
          f"{'pkg emit':>8} {'diff':>7} {'flat':>8} {'3-D s':>6} {'pkg s':>6} {'kz runs':>7}")
    rows = [(o, args.z_half) for o in args.orientations]
    if args.check_z_half and CHECK_ORIENTATION in args.orientations:
        rows.append((CHECK_ORIENTATION, args.check_z_half))
    package = {}
    for orientation, z_half in rows:
        data = case_dict(args.resolution, orientation)
        if orientation not in package:
            package[orientation] = run_package(data)
        pkg = package[orientation]
        full = run_3d(data, orientation, z_half, args.ez_at_zero)
        print(f"{orientation:<13} {z_half:>6g} {full['lee']:>8.5f} {pkg['lee']:>8.5f} "
              f"{100 * (pkg['lee'] / full['lee'] - 1):>+6.2f}% {full['emission']:>8.4f} {pkg['emission']:>8.4f} "
              f"{100 * (pkg['emission'] / full['emission'] - 1):>+6.2f}% {flat[orientation]:>8.5f} "
              f"{full['seconds']:>6.0f} {pkg['seconds']:>6.0f} {pkg['runs']:>7}", flush=True)
    print("diff = package / 3-D - 1; emit = emitted power / bulk power n w^2 |I|^2 / (6 pi); flat = exact LEE of "
          "the same dipole under a flat surface; s = wall seconds")


if __name__ == "__main__":
    main()
