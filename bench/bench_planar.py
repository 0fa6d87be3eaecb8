"""Benchmark the exact planar solver: one evaluation over 50 wavelengths.

Goal (issue): one planar evaluation over 50 wavelengths in well under a
second. The case is a flat chip (index 3.3, 0.8 µm on a perfect mirror)
with one anti-reflection film, emitter 0.3 µm deep, 50 wavelengths from
0.80 to 1.00 µm. Timed, each the best of three runs in this process:

1. the line emitter (2-D), one orientation (parallel);
2. the same, all three orientations (an isotropic case);
3. the point dipole (3-D), all three orientations;
4. case 2 with the guided modes found from their poles (``modes=True``,
   the independent balance check ``outcouple reference`` prints).

Printed: seconds per evaluation and the ratio to the 1 s goal.

Run with ``make bench`` or ``.venv/bin/python bench/bench_planar.py``.
"""

import time

import numpy as np

from fdtd_cases.case import ORIENTATIONS
from references import multilayer as ml

STACK = ml.Stack(1.0, ((1.8 + 0j, 0.12),), 3.3 + 0j, 0.8, "mirror")
WAVELENGTHS = np.linspace(0.8, 1.0, 50)
GOAL = 1.0


def evaluate(orientations, dim=2, modes=False):
    for lam in WAVELENGTHS:
        for orientation in orientations:
            ml.emitter(STACK, 0.3, lam, orientation, dim=dim, modes=modes)


def best_of(runs, *args, **kwargs):
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        evaluate(*args, **kwargs)
        times.append(time.perf_counter() - start)
    return min(times)


def main():
    rows = [
        ("2-D line emitter, parallel", best_of(3, ["parallel"])),
        ("2-D line emitter, three orientations", best_of(3, ORIENTATIONS)),
        ("3-D point dipole, three orientations", best_of(3, ORIENTATIONS, dim=3)),
        ("2-D, three orientations, guided modes found", best_of(3, ORIENTATIONS, modes=True)),
    ]
    print(f"exact planar solver, {len(WAVELENGTHS)} wavelengths per evaluation (goal: well under {GOAL:g} s)")
    print(f"  {'evaluation':<46} {'seconds':>8} {'/ goal':>8}")
    for name, seconds in rows:
        print(f"  {name:<46} {seconds:>8.3f} {seconds / GOAL:>8.3f}")


if __name__ == "__main__":
    main()
