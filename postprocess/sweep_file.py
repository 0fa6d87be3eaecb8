"""The data set of a collected sweep: ``DIR/sweep.h5`` and ``DIR/sweep.csv``, written and read.

The points' summaries come in already analysed (``outcouple collect`` does
that from the job files, with the same summary as ``run`` and ``show``).
``sweep.h5``:

/axes/KEY               the values of each swept key (grid mode: one axis each)
/                       attrs: format "outcouple-sweep", format_version, mode, keys (JSON),
                               case_file, package_version, source ("line" or "point")
/efficiency             shape: the axes' lengths (grid) or (points,) (zip)
/budget/CATEGORY        top, bottom, sides, absorbed; same shape
/by_orientation/NAME    same shape
/efficiency_spectrum    shape + (wavelengths,)
/wavelengths            sampled vacuum wavelengths, µm (those of the first point)
/flat_baseline          the exact planar efficiency of each point's stack with a flat surface
                        (of the same emitter: line, or point dipole)
/farfield/angle         far-field angles, degrees from the normal: -90 to 90 for line sources,
                        polar angles 0 to 90 for point sources
/farfield/intensity     shape + (angles,): fraction of the emitted power per degree (point
                        sources: per degree of polar angle, summed over azimuth)
/collected              with a [collection] table: fraction of the emitted power inside the
                        cone (attrs: half_angle, degrees)

``sweep.csv``: one row per point, a column per swept key (named as in the
case file), then ``efficiency``, the budget, ``flat_baseline`` and, with a [collection] table,
``collected``. Both are written under temporary names and renamed together.
"""

import csv
import json
from pathlib import Path

import h5py
import numpy as np

from fdtd_cases.case import CATEGORIES

from .files import atomic_write
from .results import FORMAT_VERSION

FORMAT = "outcouple-sweep"


def write_sweep(out_dir, the_plan, summaries, package_version):
    """Write sweep.h5 and sweep.csv of the plan's points (``summaries`` in plan order); return their paths.

    Each summary carries ``flat_baseline`` beside the usual keys.
    """
    out_dir = Path(out_dir)
    keys = [a["key"] for a in the_plan["axes"]]
    shape = tuple(len(a["values"]) for a in the_plan["axes"]) if the_plan["mode"] == "grid" else (len(summaries),)

    def grid_of(values):
        return np.array(values, dtype=float).reshape(shape + np.shape(values[0]))

    with atomic_write(out_dir / "sweep.h5") as h5_partial, atomic_write(out_dir / "sweep.csv") as csv_partial:
        _write_h5(h5_partial, the_plan, summaries, package_version, keys, grid_of)
        _write_csv(csv_partial, the_plan, summaries, keys)
    return out_dir / "sweep.h5", out_dir / "sweep.csv"


def _write_h5(path, the_plan, summaries, package_version, keys, grid_of):
    with h5py.File(path, "w") as f:
        f.attrs.update({"format": FORMAT, "format_version": FORMAT_VERSION, "mode": the_plan["mode"],
                        "keys": json.dumps(keys), "case_file": the_plan["case_file"],
                        "package_version": package_version, "source": summaries[0].get("source", "line")})
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


def _write_csv(path, the_plan, summaries, keys):
    with open(path, "w", newline="") as fh:
        writer = csv.writer(fh)
        extra = ["collected"] if "collected" in summaries[0] else []
        writer.writerow(keys + ["efficiency"] + list(CATEGORIES) + ["flat_baseline"] + extra)
        for point, s in zip(the_plan["points"], summaries):
            writer.writerow([f"{point['values'][k]:.6g}" for k in keys] + [f"{s['efficiency']:.6f}"]
                            + [f"{s['budget'][c]:.6f}" for c in CATEGORIES] + [f"{s['flat_baseline']:.6f}"]
                            + [f"{s[k]:.6f}" for k in extra])


def read_sweep(path):
    """The collected data set as plain data: keys, axes, mode, efficiency, flat_baseline."""
    with h5py.File(path, "r") as f:
        if f.attrs.get("format") != FORMAT:
            raise ValueError(f"{path}: not a collected sweep")
        keys = json.loads(f.attrs["keys"])
        return {"keys": keys, "mode": f.attrs["mode"], "axes": {k: f[f"axes/{k}"][()] for k in keys},
                "efficiency": f["efficiency"][()], "flat_baseline": f["flat_baseline"][()]}
