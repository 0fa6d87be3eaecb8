"""``outcouple compare``: full wave (FDTD) against ray optics over one parameter.

Each value of the varied key makes one case; every case is validated, with
its grid, before anything runs. The FDTD jobs of all values share one pool
of workers; the ray tracer then runs on the same domain (its absorbing
lateral boundaries where the FDTD has its side monitors). The table, a CSV
and a plot of both efficiencies against the parameter in units of the
wavelength in the chip go to the output folder, the CSV and plot written
only when everything has run.
"""

import copy
import csv
import math
import sys
import tomllib
from pathlib import Path

import numpy as np

from fdtd_cases.case_file import load_case, parse_case
from fdtd_cases.errors import CaseError, did_you_mean
from fdtd_cases.layout import make_layout
from fdtd_cases.runner import run_cases
from postprocess.files import atomic_write
from references.raytrace3d import trace_case

from .jobs import jobs_of
from .summary import summarise


def parse_vary(text):
    """``KEY=START:STOP:COUNT`` -> (key, values)."""
    key, _, rest = text.partition("=")
    parts = rest.split(":")
    if not key or len(parts) != 3:
        raise CaseError("command line", "--vary", f"expects KEY=START:STOP:COUNT, got {text!r}")
    try:
        start, stop, count = float(parts[0]), float(parts[1]), int(parts[2])
    except ValueError:
        raise CaseError("command line", "--vary", f"START and STOP must be numbers and COUNT a whole number: {text!r}") from None
    if count < 2:
        raise CaseError("command line", "--vary", f"COUNT must be at least 2, got {count}")
    if not (math.isfinite(start) and math.isfinite(stop)) or start == stop:
        raise CaseError("command line", "--vary", f"START and STOP must be finite and differ: {text!r}")
    return key, np.linspace(start, stop, count)


def case_with(data, key, value, source):
    """The case ``data`` with the dotted ``key`` set to ``value``, validated."""
    return parse_case(with_value(data, key, value, source), source=f"{source} (with {key} = {value:g})")


def numeric_keys(data, prefix=""):
    """The dotted keys of every number a case dict gives (what compare and a sweep can vary)."""
    keys = []
    for name, value in data.items():
        if isinstance(value, dict):
            keys += numeric_keys(value, f"{prefix}{name}.")
        elif isinstance(value, (int, float)) and not isinstance(value, bool):
            keys.append(f"{prefix}{name}")
    return keys


def with_value(data, key, value, source, label=None, who="compare varies"):
    """A copy of the case dict ``data`` with the dotted ``key`` (one the file gives) set to ``value``.

    A key the file does not give is refused under ``label`` (default: the key itself), in the words
    of the caller (``who``), with the closest key the file does give.
    """
    parts = key.split(".")
    changed = copy.deepcopy(data)
    table = changed
    for part in parts[:-1]:
        table = table.get(part) if isinstance(table, dict) else None
    if not isinstance(table, dict) or parts[-1] not in table or isinstance(table[parts[-1]], (dict, list)):
        hint = did_you_mean(key, [k for k in numeric_keys(data) if not k.startswith("sweep.")])
        raise CaseError(source, label or key, f"is not set in the case file; {hint}{who} a number the file "
                        "already gives (a dotted key such as surface.period; arrays of tables cannot be varied)")
    table[parts[-1]] = float(value)
    return changed


def prepare(data, source, key, values):
    """Validate every point: [(value, case, layout), ...]."""
    points = []
    for value in values:
        case = case_with(data, key, value, source)
        points.append((float(value), case, make_layout(case, source=f"{source} (with {key} = {value:g})")))
    return points


def run(points, key, tolerance, rays, workers, progress):
    """FDTD and rays for every point; rows of the comparison table."""
    runs = run_cases([(case, layout, jobs_of(case, layout)) for _, case, layout in points], workers, progress)
    rows = []
    for (value, case, layout), merged in zip(points, runs):
        wave = summarise(case, merged, layout.wavelengths, layout.resolution)
        ray = trace_case(case, layout, rays=rays)
        difference = ray["efficiency"] / wave["efficiency"] - 1 if wave["efficiency"] > 0 else math.inf
        rows.append({
            key: value,
            "chip_wavelength": case.light.wavelength / case.chip.index,
            "fdtd": wave["efficiency"], "rays": ray["efficiency"], "rays_error": ray["statistical_error"],
            "difference": difference, "differs": bool(abs(difference) > tolerance),
            "fdtd_budget": wave["budget"], "rays_budget": ray["budget"],
        })
    return rows


def write_outputs(rows, key, out_dir, title):
    """compare.csv and compare.png in ``out_dir`` (published together when both are written)."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    scale = rows[0]["chip_wavelength"]
    columns = [key, f"{key}_over_chip_wavelength", "fdtd", "rays", "rays_error", "difference", "differs"]
    csv_path, png_path = out_dir / "compare.csv", out_dir / "compare.png"
    with atomic_write(csv_path) as partial, atomic_write(png_path) as picture:
        with open(partial, "w", newline="") as f:
            writer = csv.writer(f)
            writer.writerow(columns)
            for r in rows:
                writer.writerow([f"{r[key]:.6g}", f"{r[key] / scale:.6g}", f"{r['fdtd']:.6f}", f"{r['rays']:.6f}",
                                 f"{r['rays_error']:.6f}", f"{r['difference']:+.5f}", int(r["differs"])])
        from postprocess.plots import plot_comparison  # matplotlib: loaded only when a plot is drawn

        plot_comparison(key, [r[key] for r in rows], scale, [r["fdtd"] for r in rows], [r["rays"] for r in rows],
                        [r["rays_error"] for r in rows], [r["differs"] for r in rows], picture, title)
    return csv_path, png_path


def compare(case_file, vary, tolerance=0.05, rays=20000, output=None, workers=None, progress=True):
    """``outcouple compare``: FDTD and rays over ``vary`` = "KEY=START:STOP:COUNT"; the table as a dict.

    Every value is validated before anything runs; ``compare.csv`` and
    ``compare.png`` go to ``output`` (default: the case's name with _compare).
    """
    key, values = parse_vary(vary)
    _, text = load_case(case_file)
    points = prepare(tomllib.loads(text), case_file, key, values)
    out_dir = Path(output) if output else Path(Path(case_file).stem + "_compare")
    if progress:
        jobs = sum(len(jobs_of(c, lay)) for _, c, lay in points)
        print(f"comparing {len(points)} values of {key}: {jobs} FDTD job(s), then rays", file=sys.stderr)
    rows = run(points, key, tolerance, rays, workers, progress)
    csv_path, png_path = write_outputs(rows, key, out_dir, f"{Path(case_file).name}: {key}")
    return {"case": str(case_file), "key": key, "tolerance": tolerance, "rows": rows, "csv": str(csv_path),
            "plot": str(png_path)}
