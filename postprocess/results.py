"""The HDF5 result file: write (atomically) and read.

Layout (all lengths µm; complex arrays are HDF5 compound types (r, i)):

/                       attrs: format, format_version, package_version, meep_version,
                               created, case_file
/case/source            the case file's text as given
/case/resolved          the validated case with every default filled in (TOML)
/grid                   attrs: resolution, cell_x, cell_y, y_center, width, pml, y_top,
                               y_bottom, x_side, contour, depth, symmetric, fcen, fwidth,
                               grid_points
/grid/wavelengths       sampled vacuum wavelengths
/grid/chip_polygon      (N, 2) vertices of the chip polygon
/jobs/NNN               attrs: orientation, x, symmetric, time_steps, meep_time,
                               wall_time, setup_time, step_time, grid_points, stopped_by_decay (point sources: wavelength,
                               kz, kz_weight, picture; a two-grid run's second grid: resolution,
                               its points per µm, /grid describing the first)
/jobs/NNN/source_current           Fourier transform of the source current, per wavelength
/jobs/NNN/lines/NAME               attrs: start, end, normal; datasets: one per saved
                                   field component (n_wavelengths, n_samples), Yee grid
/jobs/NNN/meep_flux/NAME           Meep's own outward flux per wavelength (cross-check; only in
                                   files written before 2026-12-03 or by run_job(cross_check=True))
/jobs/NNN/field_map                (``run --fields`` only) float32 (ny, nx): magnitude of the
                                   field along z (Ez or Hz) at the centre wavelength, from a DFT
                                   over the cell inside the absorbing layers; attrs: component,
                                   wavelength, extent (x0, x1, y0, y1) µm
/summary                attrs: json (the summary printed by ``outcouple run --json``)

A file is written under a temporary name and renamed when complete, so a
result file that exists is whole.
"""

import json
from datetime import datetime, timezone
from pathlib import Path

import h5py
import numpy as np

from .files import atomic_write

FORMAT = "outcouple-result"
FORMAT_VERSION = 1
"""Version of the result-file layout, shared by run results (this module) and collected sweeps
(:mod:`postprocess.sweep_file`); sweep job ids include it so that a new layout reruns old jobs."""
LAYOUT_ATTRS = ("resolution", "cell_x", "cell_y", "y_center", "width", "pml", "y_top", "y_bottom",
                "x_side", "contour", "depth", "symmetric", "fcen", "fwidth")


class ResultFileError(Exception):
    """A file that is missing or is not a result file of this format."""


def write_results(path, *, case_file, case_text, resolved_toml, layout, jobs, raw, summary, versions):
    """Write a complete result file at ``path`` (atomically)."""
    with atomic_write(path) as partial, h5py.File(partial, "w") as f:
        f.attrs.update({"format": FORMAT, "format_version": FORMAT_VERSION,
                        "created": datetime.now(timezone.utc).isoformat(timespec="seconds"),
                        "case_file": str(case_file), **versions})
        f["case/source"] = case_text
        f["case/resolved"] = resolved_toml
        grid = f.create_group("grid")
        for name in LAYOUT_ATTRS:
            grid.attrs[name] = getattr(layout, name)
        grid.attrs["grid_points"] = layout.grid_points
        grid["wavelengths"] = layout.wavelengths
        grid["chip_polygon"] = layout.chip_polygon
        for i, (job, result) in enumerate(zip(jobs, raw)):
            g = f.create_group(f"jobs/{i:03d}")
            g.attrs.update(job)
            for key in ("time_steps", "meep_time", "wall_time", "grid_points", "stopped_by_decay", "meep_version"):
                g.attrs[key] = result[key]
            for key in ("setup_time", "step_time"):  # absent from jobs run before 2026-12-03
                if key in result:
                    g.attrs[key] = result[key]
            g["source_current"] = result["source_current"]
            for name, line in result["lines"].items():
                lg = g.create_group(f"lines/{name}")
                lg.attrs.update({"start": line["start"], "end": line["end"], "normal": line["normal"]})
                for component, values in line["fields"].items():
                    lg[component] = values
            for name, values in result.get("meep_flux", {}).items():
                g[f"meep_flux/{name}"] = values
            if "field_map" in result:
                picture = result["field_map"]
                g.create_dataset("field_map", data=picture["magnitude"], compression="gzip")
                g["field_map"].attrs.update({k: picture[k] for k in ("component", "wavelength", "extent")})
        f.create_group("summary").attrs["json"] = json.dumps(summary)


def read_results(path):
    """Read a result file into plain Python data.

    Returns
    -------
    dict
        ``attrs``, ``case_source``, ``case_resolved``, ``grid`` (attrs plus
        ``wavelengths``, ``chip_polygon``), ``jobs`` (list of dicts with the
        job attributes, ``source_current``, ``lines``, ``meep_flux``) and
        ``summary`` (the stored summary).
    """
    path = Path(path)
    if not path.is_file():
        raise ResultFileError(f"{path}: no such file")
    try:
        f = h5py.File(path, "r")
    except OSError:
        raise ResultFileError(f"{path}: not an HDF5 file") from None
    with f:
        if f.attrs.get("format") != FORMAT:
            raise ResultFileError(f"{path}: not an outcouple result file (attribute 'format' is not {FORMAT!r})")
        if int(f.attrs["format_version"]) > FORMAT_VERSION:
            raise ResultFileError(f"{path}: format version {f.attrs['format_version']} is newer than this "
                                  f"program reads ({FORMAT_VERSION})")
        grid = {k: _plain(v) for k, v in f["grid"].attrs.items()}
        grid["wavelengths"] = f["grid/wavelengths"][()]
        grid["chip_polygon"] = f["grid/chip_polygon"][()]
        jobs = []
        for name in sorted(f["jobs"]):
            g = f["jobs"][name]
            job = {k: _plain(v) for k, v in g.attrs.items()}
            job["source_current"] = g["source_current"][()]
            job["lines"] = {
                line: {"start": tuple(g["lines"][line].attrs["start"]), "end": tuple(g["lines"][line].attrs["end"]),
                       "normal": _plain(g["lines"][line].attrs["normal"]),
                       "fields": {c: g["lines"][line][c][()] for c in g["lines"][line]}}
                for line in g["lines"]}
            if "meep_flux" in g:
                job["meep_flux"] = {k: g["meep_flux"][k][()] for k in g["meep_flux"]}
            if "field_map" in g:
                job["field_map"] = {"magnitude": g["field_map"][()],
                                    **{k: _plain(v) for k, v in g["field_map"].attrs.items()}}
            jobs.append(job)
        return {
            "attrs": {k: _plain(v) for k, v in f.attrs.items()},
            "case_source": f["case/source"].asstr()[()],
            "case_resolved": f["case/resolved"].asstr()[()],
            "grid": grid,
            "jobs": jobs,
            "summary": json.loads(f["summary"].attrs["json"]),
        }


def _plain(value):
    if isinstance(value, bytes):
        return value.decode()
    if isinstance(value, np.generic):
        return value.item()
    return value
