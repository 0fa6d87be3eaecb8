"""The public Python API: what every ``outcouple`` command calls.

A notebook uses the same functions as the command line::

    import outcouple
    case = outcouple.load_case("configs/demo_grating.toml")
    result = outcouple.run(case, workers=2)
    result.efficiency, result.budget["top"], result.to_dict()

Bad input raises :class:`fdtd_cases.errors.CaseError` (the command line turns
it into one message and exit code 2); nothing is written before the input
has been checked.
"""

import copy
import math
import os
import time
import tomllib
from pathlib import Path

import tomli_w

from fdtd_cases.case import Case, Collection
from fdtd_cases.case_file import load_case as _read_case_file
from fdtd_cases.case_file import parse_case, resolved_dict
from fdtd_cases.errors import CaseError
from fdtd_cases.accuracy import grid_error_estimate, positions_needed
from fdtd_cases.layout import make_layout
from fdtd_cases.runner import run_jobs
from postprocess import analysis, farfield
from postprocess.results import read_results, write_results

from .jobs import jobs_of
from .summary import summarise
from .version import __version__

PERIODIC = ("flat", "grating", "triangle", "sine")
"""Patterns whose ray tracing may use periodic lateral boundaries."""


class Result:
    """The summary of a run, as attributes and as the dict ``outcouple run --json`` prints.

    Attributes
    ----------
    efficiency : float
        Light extraction efficiency, all jobs and wavelengths combined power-weighted.
    budget : dict
        ``top``, ``bottom``, ``sides``, ``absorbed``: fractions of the emitted power.
    by_orientation : dict
        Efficiency per emitter orientation.
    efficiency_spectrum, wavelengths : list of float
        Efficiency per sampled vacuum wavelength (µm).
    farfield : dict
        ``angle`` (degrees), ``intensity`` (fraction of the emitted power per degree), ...
    reference : dict or None
        The exact planar result beside it (flat cases).
    collected : float or None
        Fraction of the emitted power inside the collection cone, when one is set.
    path : pathlib.Path or None
        The result file, when one was written or read.
    warnings : list of (key, message)
        What the grid checks warned about.
    """

    def __init__(self, summary, case, path=None, attrs=None, warnings=()):
        self._summary = summary
        self.case = case
        self.path = Path(path) if path is not None else None
        self.attrs = attrs or {}
        self.warnings = list(warnings)

    def __getattr__(self, name):
        summary = self.__dict__.get("_summary", {})
        if name in summary:
            return summary[name]
        if name in ("reference", "collected", "collection"):
            return None
        raise AttributeError(name)

    def to_dict(self):
        """The summary as JSON-ready data (a copy)."""
        return copy.deepcopy(self._summary)

    def __repr__(self):
        where = f", path={str(self.path)!r}" if self.path else ""
        return f"Result(efficiency={self.efficiency:.4f}{where})"


def load_case(source):
    """A validated case from a TOML file's path, a dict of its tables, or a case already loaded.

    The file's name and text go with the case into any result file it makes.
    """
    if isinstance(source, Case):
        return source
    if isinstance(source, dict):
        case = parse_case(source, source="case (dict)")
        case._origin = ("case (dict)", tomli_w.dumps(source))
        return case
    case, text = _read_case_file(source)
    case._origin = (str(source), text)
    return case


def _source(case):
    return case._origin[0]


def with_na(case, na):
    """The case with a collection cone of numerical aperture ``na`` (None: as it is)."""
    if na is None:
        return case
    if na > case.ambient.index:
        raise CaseError("command line", "--na", f"is {na:g}, more than the ambient index {case.ambient.index:g} "
                        "(na = n_ambient sin(half-angle))")
    return case.model_copy(update={"collection": Collection(na=na)})


def layout_of(case):
    """The grid-aligned layout of a case (checks that need the grid raise CaseError here)."""
    return make_layout(case, source=_source(case))


def check(case):
    """Validate a case with its grid; the derived facts and estimates as a dict (``outcouple check``)."""
    case = load_case(case)
    layout = layout_of(case)
    jobs = jobs_of(case, layout)
    est = layout.estimate(case.chip.index)
    second = layout.second.estimate(case.chip.index) if layout.second is not None else None
    seconds = sum(est["seconds"] if "resolution" not in job else second["seconds"] for job in jobs)
    workers = max(1, min(os.cpu_count() or 1, len(jobs)))
    facts = {name: getattr(layout, name) for name in ("resolution", "cell_x", "cell_y", "pml", "grid_points",
                                                      "y_top", "y_bottom", "x_side", "contour", "symmetric")}
    facts.update({
        "case_file": _source(case), "wavelengths": [float(w) for w in layout.wavelengths],
        "points_per_wavelength": dict(layout.points_per_wavelength), "jobs": len(jobs),
        "orientations": list(case.emitter.orientations()), "positions": len(case.emitter.x),
        "source": case.emitter.source,
        "estimate": est, "workers": workers, "seconds_in_all": seconds / workers,
        "second_grid": layout.second.resolution if layout.second is not None else None,
        "collection_half_angle": case.collection.degrees(case.ambient.index) if case.collection else None,
        "warnings": list(layout.warnings), "positions_needed": positions_needed(case),
        "grid_error": grid_error_estimate(case, layout.resolution),
    })
    if case.sweep is not None:
        facts["sweep"] = _sweep_facts(case)
    return facts


def _sweep_facts(case):
    """The case's [sweep] validated as ``outcouple sweep`` would (every point with its grid): its size."""
    from . import sweeps

    source, text = case._origin
    data = case.model_dump(exclude_none=True) if text is None else tomllib.loads(text)
    the_plan = sweeps.plan(data, source)
    return {"points": len(the_plan["points"]), "jobs": sum(len(p["jobs"]) for p in the_plan["points"]),
            "axes": [axis["key"] for axis in the_plan["axes"]], "mode": the_plan["mode"]}


def run(case, workers=None, fields=False, progress=True, output=None, na=None):
    """Run the FDTD jobs of a case and summarise them (``outcouple run``).

    Parameters
    ----------
    case : path, dict or Case
    workers : int, optional
        Worker processes (default: the number of cores, at most the number of jobs).
    fields : bool
        Also record a picture of the field at the centre wavelength (for the report).
    progress : bool
        Show a progress bar on standard error.
    output : path, optional
        Write the HDF5 result file here (atomically); without it nothing is written.
    na : float, optional
        Numerical aperture of a collection cone (overrides the case's ``[collection]``).
    """
    case = with_na(load_case(case), na)
    layout = layout_of(case)
    if output is not None and not Path(output).parent.is_dir():
        raise CaseError("command line", "-o", f"the folder of {output} does not exist")
    jobs = jobs_of(case, layout)
    started = time.perf_counter()
    raw = run_jobs(case, layout, jobs, workers=workers, progress=progress, field_map=fields)
    summary = summarise(case, [{**job, **result} for job, result in zip(jobs, raw)], layout.wavelengths,
                        layout.resolution)
    if output is not None:
        summary["result_file"] = str(output)
        source, text = case._origin
        resolved = tomli_w.dumps(resolved_dict(case))
        # Meep is imported only where jobs run (it prints on standard output), and they report its version.
        write_results(output, case_file=source, case_text=text if text is not None else resolved,
                      resolved_toml=resolved, layout=layout, jobs=jobs, raw=raw, summary=summary,
                      versions={"package_version": __version__, "meep_version": raw[0]["meep_version"]})
    attrs = {"elapsed": time.perf_counter() - started, "jobs": len(jobs)}
    return Result(summary, case, path=output, attrs=attrs, warnings=layout.warnings)


def stored_case(data, where):
    """The resolved case stored in a result file (read by :func:`postprocess.results.read_results`)."""
    case = parse_case(tomllib.loads(data["case_resolved"]), source=f"{where}:/case/resolved")
    case._origin = (str(data["attrs"]["case_file"]), data["case_source"])
    return case


def show(path, na=None):
    """The summary of a result file, recomputed from its saved fields (``outcouple show``)."""
    data = read_results(path)
    case = with_na(stored_case(data, path), na)
    summary = summarise(case, data["jobs"], data["grid"]["wavelengths"], data["grid"]["resolution"])
    summary["result_file"] = str(path)
    return Result(summary, case, path=path, attrs={**data["attrs"], "jobs": len(data["jobs"])})


def reference(case, na=None):
    """Exact planar and closed-form reference values of a case, no FDTD (``outcouple reference``)."""
    from references.reference import case_reference

    case = with_na(load_case(case), na)
    result = case_reference(case, angles=farfield.ANGLES)
    result["case"] = _source(case)
    if case.collection is not None:
        result.update(analysis.collection_summary(case, result))
    return result


SIDES_WARN = 0.05
"""Share of the light leaving through the absorbing sides of the rays' window above which ``rays`` warns."""


def lateral_default(case):
    """The ray tracer's default sides: periodic for a periodic pattern on a chip with a back side that
    sends light back up (mirror, metal, substrate): light crosses such a chip many times and travels
    far sideways, and absorbing sides would take what a wide chip keeps (a 500 µm flat chip on a
    mirror lost 93% through the sides of its window). Else absorbing, like the FDTD's."""
    return "periodic" if _sends_light_back(case) and case.surface.pattern in PERIODIC else "absorbing"


def _sends_light_back(case):
    """A finite chip whose back (mirror, metal, substrate) returns light to the top."""
    return math.isfinite(case.chip.thickness) and case.chip.back != "open"


def rays(case, rays=20000, seed=0, lateral=None, na=None):
    """Ray-optics extraction on the FDTD's own geometry and domain (``outcouple rays``).

    ``lateral``: "absorbing", "periodic" or None (:func:`lateral_default`). With absorbing sides that
    take more than :data:`SIDES_WARN` of the light of a chip whose back sends light back up,
    ``warnings`` ([key, message] pairs) names the share and the option.
    """
    from references.raytrace3d import trace_case

    case = with_na(load_case(case), na)
    layout = make_layout(case, source=_source(case), fdtd=False)
    lateral = lateral or lateral_default(case)
    if lateral == "periodic" and case.surface.pattern not in PERIODIC:
        raise CaseError("command line", "--lateral", f"periodic needs a periodic pattern ({', '.join(PERIODIC)}), "
                        f"not {case.surface.pattern!r}")
    started = time.perf_counter()
    result = trace_case(case, layout, rays=rays, lateral=lateral, seed=seed)
    elapsed = time.perf_counter() - started
    result.update({"case": _source(case), "lateral": lateral, "elapsed": elapsed,
                   "events_per_second": result["events"] / elapsed if elapsed > 0 else None, "warnings": []})
    sides = result["budget"]["sides"]
    # Without a returning back, light leaving sideways is lost anyway: no warning.
    if lateral == "absorbing" and _sends_light_back(case) and sides > SIDES_WARN:
        fix = ("--lateral periodic repeats the pattern sideways as in a wide chip" if case.surface.pattern in PERIODIC
               else "a wider grid.width keeps more of it")
        result["warnings"].append(["lateral", f"{100 * sides:.0f}% of the light left through the absorbing sides of "
                                              f"the {2 * layout.x_side:g} µm window; {fix}"])
    if case.collection is not None:
        result.update(analysis.collection_summary(case, result))
    return result


def multipass(case, angles=90, response=None, workers=None, progress=True, vary=(), plot=None):
    """A thick chip: the top's full-wave response inside a multi-pass model (``outcouple multipass``).

    See :func:`outcouple.thick_chip.run`; the top's response is cached (``$OUTCOUPLE_CACHE``).
    """
    from . import thick_chip

    case = load_case(case)
    return thick_chip.run(case, _source(case), angles=angles, response=response, workers=workers, progress=progress,
                          vary=vary, plot=plot)


def report(source, output=None, na=None):
    """One self-contained HTML report of a result file or a finished sweep folder; returns its path."""
    from postprocess import report as html_report
    from postprocess.files import atomic_write
    from references.reference import case_reference

    source = Path(source)
    if source.is_dir():
        from . import sweeps

        the_plan = sweeps.read_plan(source)
        if na is not None:
            first = parse_case(tomllib.loads(the_plan["points"][0]["case_toml"]), source=f"{source}/plan.json")
            the_plan["collection"] = {"na": with_na(first, na).collection.na}
        summaries, sweep_data = sweeps.collect(source, the_plan)
        text = html_report.sweep_report(source, the_plan, summaries, sweep_data)
        out = Path(output) if output else source / "report.html"
    else:
        data = read_results(source)
        case = stored_case(data, source)
        case = with_na(case, na)
        layout = make_layout(case, source=f"{source}:/case/resolved")
        grid = data["grid"]
        summary = summarise(case, data["jobs"], grid["wavelengths"], grid["resolution"])
        bounds = None if "reference" in summary else case_reference(case, modes=False)
        from . import thick_chip

        text = html_report.result_report(data, case, layout, summary, bounds, thinning=thick_chip.cached_thinning(case))
        out = Path(output) if output else source.with_suffix(".html")
    if not out.parent.is_dir():
        raise CaseError("command line", "-o", f"the folder of {out} does not exist")
    with atomic_write(out) as partial:
        partial.write_text(text, encoding="utf-8")
    return out


def plot(out_dir, output=None):
    """Efficiency against one or two swept keys from a collected sweep; returns the PNG's path."""
    from postprocess.plots import plot_sweep
    from postprocess.sweep_file import read_sweep

    path = Path(out_dir) / "sweep.h5"
    if not path.is_file():
        raise CaseError(out_dir, "", "has no sweep.h5; run 'outcouple collect' first")
    out = Path(output) if output else Path(out_dir) / "sweep.png"
    plot_sweep(read_sweep(path), out)
    return out
