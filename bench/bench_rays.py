"""Benchmark the ray tracer: interactions per second on one core, and rays for a 0.5% error.

Case: a V-groove texture (period 2 µm, 1 µm deep) on a 3 µm chip of index
3.0 with alpha = 30/cm on a perfect mirror, out-of-plane emitter 1.5 µm
deep, periodic lateral boundaries: light is trapped and bounces many times,
so the count is dominated by interactions, not by set-up. 100 000 rays, one
process (numpy is single-threaded here).

Printed: interactions, seconds, interactions per second against the goal of
2 million per second (ratio), and the rays per job needed for a 0.5%
statistical error of the escaped fraction.

Run with ``make bench`` or ``.venv/bin/python bench/bench_rays.py``.
"""

import time

from fdtd_cases.case_file import parse_case
from fdtd_cases.layout import make_layout
from references import raytrace

GOAL = 2e6
CASE = {"light": {"wavelength": 1.0},
        "chip": {"index": 3.0, "alpha": 30.0, "thickness": 3.0, "back": "mirror"},
        "surface": {"pattern": "triangle", "period": 2.0, "height": 1.0},
        "emitter": {"depth": 1.5, "orientation": "out-of-plane"}}


def main():
    case = parse_case(CASE)
    layout = make_layout(case, fdtd=False)
    start = time.perf_counter()
    result = raytrace.run_case(case, layout, rays=100000, lateral="periodic")
    seconds = time.perf_counter() - start
    rate = result["events"] / seconds
    print("ray tracer, V-groove chip on a mirror, 100 000 rays (one core)")
    print(f"  interactions {result['events']:,} in {seconds:.1f} s: {rate / 1e6:.2f} million per second "
          f"(goal {GOAL / 1e6:g} million; ratio {rate / GOAL:.2f})")
    print(f"  extraction efficiency {result['efficiency']:.4f} +/- {result['statistical_error']:.4f}; "
          f"rays for a 0.5% statistical error: {result['rays_for_half_percent']:,}")


if __name__ == "__main__":
    main()
