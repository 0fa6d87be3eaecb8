"""Point sources: how many kz runs for 1%, against uniform kz steps, and what one kz run costs.

Part 1 needs no Meep: the exact 2-D power of each kz for a dipole under a flat half-space
(references/kz_spectrum.py, which integrates to the exact 3-D dipole) is summed with the tool's
rule at growing node counts and with uniform steps of 0.02 k0 (midpoints), and the error of the
combined efficiency against the exact 3-D dipole is printed for each. Part 2 times Meep runs of
single nodes against the kz = 0 run of the same case (one process, one after the other).

    .venv/bin/python bench/bench_point.py
"""

import time

import numpy as np

from fdtd_cases import kz
from fdtd_cases.case import ORIENTATIONS
from references import multilayer as ml
from references.kz_spectrum import spectrum

N_CHIP, DEPTH, WAVELENGTH = 2.5, 0.3, 1.0


def combined(nodes, weights, stack):
    """Efficiency of the isotropic dipole from nodes in u = kz / k0 (sum over sum of the three)."""
    top = emitted = 0.0
    for orientation in ORIENTATIONS:
        values = [spectrum(stack, DEPTH, WAVELENGTH, orientation, u) for u in nodes]
        top += np.sum(weights * np.array([v["top"] for v in values]))
        emitted += np.sum(weights * np.array([v["emitted"] for v in values]))
    return top / emitted


def quadrature():
    stack = ml.Stack(1.0, (), complex(N_CHIP), np.inf)
    exact = [ml.emitter(stack, DEPTH, WAVELENGTH, o, dim=3) for o in ORIENTATIONS]
    reference = sum(e["emission"] * e["efficiency"] for e in exact) / sum(e["emission"] for e in exact)
    print(f"flat n = {N_CHIP}, dipole {DEPTH} um deep, exact isotropic efficiency {reference:.6f}")
    print(f"  {'rule':<44} {'runs per orientation':>20} {'error':>10}")
    breaks = kz.breakpoints([1.0, N_CHIP], N_CHIP)
    for least in (2, 3, 4, 6):
        counts = kz.fringe_counts(breaks, N_CHIP, DEPTH, WAVELENGTH, least)
        u, w = kz.rule(breaks, counts)
        label = f"the tool's (least {least} per piece)" + (" = default" if least == kz.DEFAULT_NODES else "")
        print(f"  {label:<44} {len(u):>20} {combined(u, w, stack) / reference - 1:>+10.2e}", flush=True)
    for step in (0.02, 0.05, 0.1):
        u = np.arange(step / 2, N_CHIP, step)
        w = np.full_like(u, step)
        print(f"  {f'uniform steps of {step} k0 (midpoints)':<44} {len(u):>20} "
              f"{combined(u, w, stack) / reference - 1:>+10.2e}", flush=True)


def timing():
    from fdtd_cases.case_file import parse_case
    from fdtd_cases.layout import make_layout
    from fdtd_cases.meep_job import run_job

    case = parse_case({"light": {"wavelength": WAVELENGTH}, "chip": {"index": N_CHIP},
                       "emitter": {"depth": DEPTH, "orientation": "parallel", "source": "point"}})
    layout = make_layout(case)
    print(f"\nwall time of one run, parallel dipole, {layout.grid_points:,} grid points, mirror symmetry")
    base = None
    for u in (0.0, 0.5, 0.95, 1.5, 2.2, 2.45):
        started = time.perf_counter()
        raw = run_job(case, layout, "parallel", 0.0, layout.symmetric, kz=u / WAVELENGTH, wavelength=WAVELENGTH)
        seconds = time.perf_counter() - started
        base = base or seconds
        print(f"  kz = {u:4.2f} k0: {seconds:6.1f} s, {raw['time_steps']:>6} steps, {seconds / base:5.1f} x the kz = 0 run",
              flush=True)


if __name__ == "__main__":
    quadrature()
    timing()
