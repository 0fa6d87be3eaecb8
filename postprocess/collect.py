"""Collect a finished sweep into one data set: ``DIR/sweep.h5`` and ``DIR/sweep.csv``.

Every point is re-analysed from its jobs' saved line fields (the same
integration as ``outcouple run`` and ``show``), jobs combined by the
power-weighting rule. ``sweep.h5``:

/axes/KEY               the values of each swept key (grid mode: one axis each)
/                       attrs: format "outcouple-sweep", format_version, mode, keys (JSON),
                               case_file, package_version
/efficiency             shape: the axes' lengths (grid) or (points,) (zip)
/budget/CATEGORY        top, bottom, sides, absorbed; same shape
/by_orientation/NAME    same shape
/efficiency_spectrum    shape + (wavelengths,)
/wavelengths            sampled vacuum wavelengths, µm (those of the first point)
/flat_baseline          the exact planar efficiency of each point's stack with a flat surface
/farfield/angle         far-field angles, degrees from the normal (-90 to 90)
/farfield/intensity     shape + (angles,): fraction of the emitted power per degree
/collected              with a [collection] table: fraction of the emitted power inside the
                        cone (attrs: half_angle, degrees)

``sweep.csv``: one row per point, a column per swept key (named as in the
case file), then ``efficiency``, the budget, ``flat_baseline`` and, with a [collection] table,
``collected``. Both are
written under temporary names and renamed; collect refuses to write either
while any job is missing or failed.
"""

import csv
import json
import os
import tomllib
from pathlib import Path

import h5py
import numpy as np

from .analysis import analyse
from references.reference import CATEGORIES, planar
from .results import read_results

FORMAT = "outcouple-sweep"
FORMAT_VERSION = 1


class IncompleteSweep(Exception):
    """Some jobs of the sweep are missing or failed."""


def point_summaries(out_dir, the_plan):
    """The analysed summary of every point, from the job files."""
    from fdtd_cases.case import Collection, parse_case

    jobs_dir = Path(out_dir) / "jobs"
    missing = [job["id"] for point in the_plan["points"] for job in point["jobs"]
               if not (jobs_dir / f"{job['id']}.h5").is_file()]
    if missing:
        raise IncompleteSweep(f"{len(missing)} job(s) not done (for example {missing[0]}); "
                              "run 'outcouple sweep' again to finish them, 'outcouple status' to see why")
    summaries = []
    for point in the_plan["points"]:
        case = parse_case(tomllib.loads(point["case_toml"]), source=f"{out_dir}/plan.json")
        if the_plan.get("collection"):
            case = case.model_copy(update={"collection": Collection(**the_plan["collection"])})
        jobs, grid = [], None
        for job in point["jobs"]:
            data = read_results(jobs_dir / f"{job['id']}.h5")
            grid = data["grid"]
            jobs += data["jobs"]
        summary = analyse(case, jobs, grid["wavelengths"], grid["resolution"])
        flat = case.model_copy(update={"surface": type(case).model_fields["surface"].default})
        summary["flat_baseline"] = planar(flat)["efficiency"]
        summaries.append(summary)
    return summaries


def collect(out_dir, the_plan):
    """Write sweep.h5 and sweep.csv; return their paths and the point summaries."""
    from outcouple import __version__

    out_dir = Path(out_dir)
    summaries = point_summaries(out_dir, the_plan)
    keys = [a["key"] for a in the_plan["axes"]]
    shape = tuple(len(a["values"]) for a in the_plan["axes"]) if the_plan["mode"] == "grid" else (len(summaries),)

    def grid_of(values):
        return np.array(values, dtype=float).reshape(shape + np.shape(values[0]))

    h5_partial = out_dir / "sweep.h5.partial"
    with h5py.File(h5_partial, "w") as f:
        f.attrs.update({"format": FORMAT, "format_version": FORMAT_VERSION, "mode": the_plan["mode"],
                        "keys": json.dumps(keys), "case_file": the_plan["case_file"], "package_version": __version__})
        for a in the_plan["axes"]:
            f[f"axes/{a['key']}"] = np.array(a["values"])
        f["efficiency"] = grid_of([s["efficiency"] for s in summaries])
        for c in CATEGORIES:
            f[f"budget/{c}"] = grid_of([s["budget"][c] for s in summaries])
        for name in summaries[0]["by_orientation"]:
            f[f"by_orientation/{name}"] = grid_of([s["by_orientation"][name] for s in summaries])
        f["efficiency_spectrum"] = grid_of([s["efficiency_spectrum"] for s in summaries])
        f["wavelengths"] = np.array(summaries[0]["wavelengths"])
        f["flat_baseline"] = grid_of([s["flat_baseline"] for s in summaries])
        f["farfield/angle"] = np.array(summaries[0]["farfield"]["angle"])
        f["farfield/intensity"] = grid_of([s["farfield"]["intensity"] for s in summaries])
        if "collected" in summaries[0]:
            f["collected"] = grid_of([s["collected"] for s in summaries])
            f["collected"].attrs["half_angle"] = summaries[0]["collection"]["half_angle"]
    csv_partial = out_dir / "sweep.csv.partial"
    with open(csv_partial, "w", newline="") as fh:
        writer = csv.writer(fh)
        extra = ["collected"] if "collected" in summaries[0] else []
        writer.writerow(keys + ["efficiency"] + list(CATEGORIES) + ["flat_baseline"] + extra)
        for point, s in zip(the_plan["points"], summaries):
            writer.writerow([f"{point['values'][k]:.6g}" for k in keys] + [f"{s['efficiency']:.6f}"]
                            + [f"{s['budget'][c]:.6f}" for c in CATEGORIES] + [f"{s['flat_baseline']:.6f}"]
                            + [f"{s[k]:.6f}" for k in extra])
    os.replace(h5_partial, out_dir / "sweep.h5")
    os.replace(csv_partial, out_dir / "sweep.csv")
    return out_dir / "sweep.h5", out_dir / "sweep.csv", summaries


def read_sweep(path):
    """The collected data set as plain data: keys, axes, mode, efficiency, flat_baseline."""
    with h5py.File(path, "r") as f:
        if f.attrs.get("format") != FORMAT:
            raise ValueError(f"{path}: not a collected sweep")
        keys = json.loads(f.attrs["keys"])
        return {"keys": keys, "mode": f.attrs["mode"], "axes": {k: f[f"axes/{k}"][()] for k in keys},
                "efficiency": f["efficiency"][()], "flat_baseline": f["flat_baseline"][()]}
