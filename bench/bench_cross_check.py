"""What Meep's own flux monitors (run_job's cross_check, off by default since 2026-12-03) cost.

One flat job of bench/bench_runner.py's case (n = 3.3, out-of-plane, 16 points per wavelength, no
symmetry), run alternately with and without the monitors, three pairs in one process; prints the
wall times, the time steps and their ratios. About 1 minute.

    .venv/bin/python bench/bench_cross_check.py
"""

import time

from bench_runner import CASE, ORIENTATION
from fdtd_cases.case_file import parse_case
from fdtd_cases.layout import make_layout
from fdtd_cases.meep_job import run_job


def main():
    case = parse_case(CASE, source="bench")
    layout = make_layout(case, source="bench")
    rows = {True: [], False: []}
    for _ in range(3):
        for cross_check in (True, False):
            started = time.perf_counter()
            raw = run_job(case, layout, ORIENTATION, 0.0, symmetric=False, cross_check=cross_check)
            rows[cross_check].append((time.perf_counter() - started, raw["time_steps"]))
    for cross_check, runs in rows.items():
        print(f"monitors {'on ' if cross_check else 'off'}: " + ", ".join(f"{t:.2f} s ({n} steps)" for t, n in runs))
    ratio = [a[0] / b[0] for a, b in zip(rows[True], rows[False])]
    steps = [a[1] / b[1] for a, b in zip(rows[True], rows[False])]
    print("on / off, wall time per pair: " + ", ".join(f"{r:.3f}" for r in ratio)
          + "; time steps: " + ", ".join(f"{r:.3f}" for r in steps))


if __name__ == "__main__":
    main()
