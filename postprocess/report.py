"""One self-contained HTML report of a result file or a collected sweep (figures embedded).

The report is given the run's summary (the same numbers as ``outcouple
show``), draws the pictures of :mod:`postprocess.plots` into memory and
embeds them as base64 PNG, so the file can be mailed or archived alone. Every
section has an ``id`` (case, grid, structure, efficiency, budget, farfield,
spectrum, fields, sweep, cautions) so that tests and readers can find it.
"""

import base64
import html
import io
import tomllib
from datetime import datetime, timezone

import numpy as np

from fdtd_cases.case import CATEGORIES

from . import farfield, plots

STYLE = """
body { font-family: 'DejaVu Sans', Helvetica, Arial, sans-serif; margin: 2em auto; max-width: 62em;
       color: #1d2d44; line-height: 1.4; padding: 0 1em; }
h1 { border-bottom: 3px solid #c9b27c; padding-bottom: 0.2em; }
h2 { color: #1f5f8b; margin-top: 1.6em; border-bottom: 1px solid #d8dee6; }
table { border-collapse: collapse; margin: 0.6em 0; font-size: 0.92em; }
th, td { border: 1px solid #d8dee6; padding: 0.25em 0.6em; text-align: right; }
th { background: #eef4f8; } td.name, th.name { text-align: left; }
pre { background: #f6f4ee; padding: 0.8em; border-left: 4px solid #c9b27c; overflow-x: auto; font-size: 0.85em; }
img { max-width: 100%; display: block; margin: 0.6em 0; }
.note { color: #5a6b7d; font-size: 0.9em; } .warn { color: #a04b4b; font-weight: bold; }
.caution { background: #fff6e5; border: 1px solid #e0a100; padding: 0.6em 1em; }
"""

CAUTIONS = """<p>These are results of a full-wave model of a structure that does not vary along z: a line
emitter (a two-dimensional model), or a point dipole assembled from such two-dimensional runs. Real
chips have finite size in every direction; use the numbers to compare designs and
to understand trends, and confirm a design by measurement before committing to it. Numbers depend
on the material data and the grid: see the convergence facts above and run
<code>outcouple converge</code> before relying on a value.</p>
<p>Nothing here assesses optical radiation safety. For high-power or short-wavelength emitters,
eye and skin exposure must be evaluated under the applicable standards (for example IEC 62471
for lamps and LEDs, IEC 60825-1 for lasers) by qualified people.</p>"""


def _figure(draw, *args, alt="", **kwargs):
    """An <img> with the PNG that ``draw(*args, buffer, **kwargs)`` writes, embedded as base64."""
    buffer = io.BytesIO()
    draw(*args, buffer, **kwargs)
    data = base64.b64encode(buffer.getvalue()).decode("ascii")
    return f'<img alt="{html.escape(alt)}" src="data:image/png;base64,{data}">'


def _table(header, rows, names=1):
    """HTML table; the first ``names`` columns are left-aligned labels."""
    def cell(tag, i, value):
        css = ' class="name"' if i < names else ""
        return f"<{tag}{css}>{html.escape(str(value))}</{tag}>"
    out = ["<table><tr>" + "".join(cell("th", i, h) for i, h in enumerate(header)) + "</tr>"]
    out += ["<tr>" + "".join(cell("td", i, v) for i, v in enumerate(row)) + "</tr>" for row in rows]
    return "\n".join(out) + "</table>"


def _section(ident, title, body):
    return f'<section id="{ident}"><h2>{html.escape(title)}</h2>\n{body}\n</section>'


def _page(title, sections):
    created = datetime.now(timezone.utc).isoformat(timespec="seconds")
    return (f"<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>{html.escape(title)}</title>"
            f"<style>{STYLE}</style></head><body>\n<h1>{html.escape(title)}</h1>\n"
            f"<p class=\"note\">written {created} by outcouple report</p>\n" + "\n".join(sections)
            + "\n</body></html>\n")


def _f(value, digits=4):
    return "n/a" if value is None else f"{value:.{digits}f}"


def _diff(a, b):
    return f"{100 * (a / b - 1):+.2f}%" if b else "n/a"


def result_report(data, case, layout, summary, bounds=None, thinning=None):
    """HTML text of the report of one result file.

    Parameters
    ----------
    data : dict
        :func:`postprocess.results.read_results` output.
    case : fdtd_cases.case.Case
        The stored resolved case (with any collection cone to report).
    layout : fdtd_cases.layout.Layout
        The layout rebuilt from that case (the same code built the run's).
    summary : dict
        The run's summary (:func:`outcouple.summary.summarise` of the saved fields).
    bounds : dict, optional
        For a patterned surface, the reference values that bracket it
        (:func:`references.reference.case_reference`): flat baseline,
        randomising bound, escape cone.
    thinning : dict, optional
        Efficiency against chip thickness (:func:`outcouple.thick_chip.thinning_curves`), when the
        case's top response is in the multi-pass cache; without it the section says how to get it.
    """
    grid = data["grid"]
    attrs = data["attrs"]
    sections = [_section("case", "Case", f"<p>case file <code>{html.escape(str(attrs['case_file']))}</code>, "
                         f"outcouple {html.escape(str(attrs['package_version']))}, Meep "
                         f"{html.escape(str(attrs['meep_version']))}, run {html.escape(str(attrs['created']))}</p>"
                         f"<pre>{html.escape(data['case_source'])}</pre>"
                         "<details><summary>the case with every default filled in</summary>"
                         f"<pre>{html.escape(data['case_resolved'])}</pre></details>")]
    sections.append(_section("grid", "Grid and convergence", _grid_facts(case, layout, summary)))
    sections.append(_section("structure", "Structure", _figure(
        plots.plot_structure, layout, case.emitter.x, alt="structure with monitors and emitter")))
    sections.append(_section("efficiency", "Extraction efficiency", _efficiency(summary, bounds)))
    rows = [("FDTD", summary["budget"])]
    if summary.get("reference"):
        rows.append(("exact, flat stack", summary["reference"]["budget"]))
    budget_rows = [[label] + [_f(b[k]) for k in CATEGORIES] for label, b in rows]
    sections.append(_section("budget", "Power budget", _table(["", *CATEGORIES], budget_rows)
                             + _figure(plots.plot_budget, rows, alt="power budget")
                             + "<p class=\"note\">fractions of the emitted power, all jobs and wavelengths "
                               "combined power-weighted. Sides: light reaching the lateral monitors inside the "
                               "chip (guided and edge-bound light).</p>"))
    sections.append(_section("farfield", "Far field", _farfield(summary)))
    sections.append(_section("spectrum", "Efficiency against wavelength", _figure(
        plots.plot_spectra, [("FDTD", summary)], alt="efficiency against wavelength")
        if len(summary["wavelengths"]) > 1 else "<p>one wavelength only: "
        f"{summary['wavelengths'][0]:g} µm, efficiency {summary['efficiency']:.4f}</p>"))
    pictures = [(job, job["field_map"]) for job in data["jobs"] if "field_map" in job]
    if pictures:
        body = "".join(_figure(plots.plot_field_map, fm, grid["chip_polygon"], (job["x"], -case.emitter.depth),
                               title=f"{job['orientation']} emitter at x = {job['x']:g} µm: |{fm['component'][0].upper()}"
                                     f"{fm['component'][1]}| at {fm['wavelength']:.4g} µm"
                                     + (f", kz = {job['kz']:.3f} k0" if "kz" in job else ""),
                               alt=f"field of the {job['orientation']} job") for job, fm in pictures)
    else:
        body = "<p>no field pictures in this file (run with <code>outcouple run --fields</code>)</p>"
    sections.append(_section("fields", "Fields", body))
    if thinning is not None:
        body = _figure(plots.plot_thinning, thinning, alt="efficiency against chip thickness",
                       title=f"the same top on a chip 1 to 1000 µm thick (back {case.chip.back}, "
                             f"alpha {case.chip.alpha:g} /cm)")
        body += ("<p class=\"note\">multi-pass model with the top's cached full-wave response (2-D, incoherent "
                 "between passes, emitter far from the top); see the README's thick-chip section.</p>")
    else:
        body = ("<p>no thinning picture: for a patterned top, <code>outcouple multipass CASE</code> computes the "
                "top's response (periodic cells, 90 angle bins) once and caches it; the report then shows the "
                "efficiency against chip thickness.</p>")
    sections.append(_section("thinning", "Thick chips: efficiency against thickness", body))
    sections.append(_section("cautions", "Cautions", f'<div class="caution">{CAUTIONS}</div>'))
    return _page(f"Light extraction: {attrs['case_file']}", sections)


def _grid_facts(case, layout, summary):
    ppw = layout.points_per_wavelength
    jobs = summary["jobs"]
    rows = [
        ("resolution", f"{layout.resolution:g} points/µm (grid step {1000 / layout.resolution:.2f} nm)"),
        ("points per wavelength", f"chip {ppw['chip']:.1f}, ambient {ppw['ambient']:.1f} (shortest wavelength)"),
        ("cell", f"{layout.cell_x:.3f} x {layout.cell_y:.3f} µm including PML {layout.pml:.3f} µm, "
                 f"{layout.grid_points:,} grid points"),
        ("top monitor", f"y = {layout.y_top:.3f} µm, from x = -{layout.x_side:.3f} to {layout.x_side:.3f} µm"),
        ("stop rule", f"DFT fields change by less than {case.grid.decay:g} per period"),
        *([("second grid", "{1:g} points/µm, every job run on it too; the numbers reported are the Richardson "
            "extrapolation of the two grids (efficiency {2:.4f} on {0:g}, {3:.4f} on {1:g} points/µm alone)".format(
                *summary["grids"]["resolution"], *summary["grids"]["efficiency"]))] if "grids" in summary else []),
        ("jobs", ", ".join(f"{j['orientation']} x = {j['x']:g}: {j.get('time_steps', '?')} steps"
                           + ("" if j.get("stopped_by_decay", True) else " (hit the time limit)") for j in jobs)),
        ("balance error", _f(summary["balance_error"]) if summary["balance_error"] is not None
         else "n/a (absorbing materials)"),
        ("far-field closure", f"{summary['farfield_closure']:+.2%} (far-field integral against the top flux)"
         if summary["farfield_closure"] is not None else "n/a"),
    ]
    warnings = []
    if any(j.get("stopped_by_decay") is False for j in jobs):
        warnings.append("some jobs hit the run-time limit before the fields decayed")
    if ppw["chip"] < 16:
        warnings.append(f"{ppw['chip']:.1f} points per wavelength in the chip: below the 16 at which a flat "
                        "interface agrees with the exact answer to about 1% (check with outcouple converge)")
    if summary["farfield_closure"] is not None and abs(summary["farfield_closure"]) > farfield.CLOSURE_WARN:
        warnings.append(f"the far field's integral differs from the top flux by more than "
                        f"{farfield.CLOSURE_WARN:.0%}; widen grid.width")
    return (_table(["", "value"], rows, names=2)
            + "".join(f'<p class="warn">warning: {html.escape(w)}</p>' for w in warnings))


def _efficiency(summary, bounds):
    ref = summary.get("reference")
    header = ["", "FDTD"] + (["exact", "difference"] if ref else [])
    rows = []
    for name, value in summary["by_orientation"].items():
        row = [name, _f(value)]
        if ref:
            row += [_f(ref["by_orientation"][name]), _diff(value, ref["by_orientation"][name])]
        rows.append(row)
    row = ["combined", _f(summary["efficiency"])]
    if ref:
        row += [_f(ref["efficiency"]), _diff(summary["efficiency"], ref["efficiency"])]
    rows.append(row)
    body = _table(header, rows)
    if len(summary["wavelengths"]) > 1:
        wl_rows = [[f"{lam:.4f}", _f(eff)] + ([_f(ref["efficiency_spectrum"][i])] if ref else [])
                   for i, (lam, eff) in enumerate(zip(summary["wavelengths"], summary["efficiency_spectrum"]))]
        body += _table(["wavelength (µm)", "FDTD"] + (["exact"] if ref else []), wl_rows)
    if ref:
        body += f"<p class=\"note\">exact: {html.escape(ref['method'])}</p>"
    elif bounds is not None:
        point = summary.get("source") == "point"
        key = "point_dipole" if point else "line_emitter"
        flat = bounds["point_dipole"]["efficiency"] if point else bounds["efficiency"]
        body += _table(["reference for this patterned surface (not predictions)",
                        "point dipole (3-D)" if point else "line emitter (2-D)"], [
            ["the same stack with a flat surface (exact)", _f(flat)],
            ["an ideal randomising top over this chip and back", _f(bounds["randomising_bound"][key])],
            ["escape cone with Fresnel losses, thick chip", _f(bounds["escape_cone"][key]["with_fresnel"])],
        ])
    if summary.get("point_dipole_baseline") is not None:
        body += (f'<p class="warn">3-D context: these are a line emitter\'s numbers. Point dipoles of the same '
                 f"orientations under the same stack with a flat surface escape "
                 f"{_f(summary['point_dipole_baseline'])} (exact); a die emits from point dipoles.</p>")
    return body


def _farfield(summary):
    if "cuts" in summary["farfield"]:
        return _hemisphere(summary)
    ff, ref = summary["farfield"], summary.get("reference")
    half = summary["collection"]["half_angle"] if "collection" in summary else None
    body = _figure(plots.plot_farfield, ff, reference=ref["farfield"] if ref else None, collection=half,
                   alt="far-field pattern")
    angles, intensity = np.array(ff["angle"]), np.array(ff["intensity"])
    half_power = farfield.half_power_angle(angles, intensity)
    rows = [["half-angle holding half the escaped power (degrees)",
             "n/a" if half_power is None else f"{half_power:.1f}", "30.0"]]
    for fan in (10, 30, 60):
        rows.append([f"fraction of the emitted power within +/-{fan} degrees",
                     _f(farfield.collected(angles, intensity, fan)),
                     _f(summary["efficiency"] * float(np.sin(np.radians(fan))))])
    if "collected" in summary:
        c = summary["collection"]
        rows.append([f"collected within NA {c['na']:.3f} (+/-{c['half_angle']:.1f} degrees)",
                     _f(summary["collected"]), _f(c["lambertian"])])
    body += _table(["", "FDTD", "Lambertian, same escaped power"], rows)
    if ref and "collection" in summary:
        body += f"<p>exact planar value inside the collection cone: {_f(summary['collection']['exact'])}</p>"
    body += ("<p class=\"note\">angles in the ambient from the surface normal, positive towards +x; from the "
             "angular spectrum of the fields on the top monitor line. Detail finer than about "
             "wavelength / monitor width (radians) is not resolved.</p>")
    return body


def _hemisphere(summary):
    """The far-field section of a point source: the hemisphere map, the two cuts and 3-D cones."""
    ff, ref = summary["farfield"], summary.get("reference")
    half = summary["collection"]["half_angle"] if "collection" in summary else None
    body = _figure(plots.plot_hemisphere, ff, collection=half, alt="far field over the hemisphere")
    body += _figure(plots.plot_cuts, ff, alt="radiance in the x-y and z-y planes")
    angles, intensity = np.array(ff["angle"]), np.array(ff["intensity"])
    exact = (lambda fan: _f(farfield.collected(ref["farfield"]["angle"], ref["farfield"]["intensity"], fan))) \
        if ref else (lambda fan: "")
    half_power = farfield.half_power_angle(angles, intensity)
    rows = [["half-angle of the cone holding half the escaped power (degrees)",
             "n/a" if half_power is None else f"{half_power:.1f}", "45.0",
             _angle_or_blank(ref and farfield.half_power_angle(ref["farfield"]["angle"], ref["farfield"]["intensity"]))]]
    for fan in (10, 30, 60):
        rows.append([f"fraction of the emitted power within a cone of {fan} degrees",
                     _f(farfield.collected(angles, intensity, fan)),
                     _f(summary["efficiency"] * float(np.sin(np.radians(fan))) ** 2), exact(fan)])
    if "collected" in summary:
        c = summary["collection"]
        rows.append([f"collected within NA {c['na']:.3f} (+/-{c['half_angle']:.1f} degrees)",
                     _f(summary["collected"]), _f(c["lambertian"]), _f(c["exact"]) if "exact" in c else ""])
    body += _table(["", "FDTD", "Lambertian, same escaped power", "exact, flat stack" if ref else ""], rows)
    body += ("<p class=\"note\">a 3-D point dipole's far field, from the out-of-plane wavenumber runs: each "
             "run gives one row of directions, and the rows are interpolated between runs. Cones are "
             "circular about the normal; the x-y plane runs across the pattern's lines, the z-y plane along "
             "them. Single directions ripple by several percent (the finite top monitor line); "
             "cones and sums over angle are steadier.</p>")
    return body


def _angle_or_blank(value):
    return "" if value is None or value is False else f"{value:.1f}"


def sweep_report(out_dir, the_plan, summaries, sweep_data):
    """HTML text of the report of a collected sweep.

    Parameters
    ----------
    out_dir : path
    the_plan : dict
        The sweep's plan.
    summaries : list of dict
        Summary of each point (:func:`outcouple.sweeps.point_summaries`).
    sweep_data : dict
        :func:`postprocess.sweep_file.read_sweep` output, for the sweep plot.
    """
    keys = [a["key"] for a in the_plan["axes"]]
    first = tomllib.loads(the_plan["points"][0]["case_toml"])
    sections = [_section("case", "Sweep", f"<p>folder <code>{html.escape(str(out_dir))}</code>, case file "
                         f"<code>{html.escape(the_plan['case_file'])}</code>, {len(the_plan['points'])} point(s) "
                         f"({the_plan['mode']} of {', '.join(keys)}), "
                         f"{sum(len(p['jobs']) for p in the_plan['points'])} job(s)</p>")]
    g = first.get("grid", {})
    sections.append(_section("grid", "Grid and convergence", _table(["", "value"], [
        ("points per wavelength", g.get("points_per_wavelength", "")),
        ("resolution", g.get("resolution", "derived from points per wavelength")),
        ("worst balance error", _f(max((s["balance_error"] for s in summaries if s["balance_error"] is not None),
                                       default=None))),
        ("worst far-field closure", f"{max(abs(s['farfield_closure'] or 0) for s in summaries):.2%}"),
    ], names=2)))
    sections.append(_section("sweep", "Efficiency across the sweep",
                             _figure(plots.plot_sweep, sweep_data, alt="sweep plot") + _sweep_table(the_plan, summaries, keys)))
    best = int(np.argmax([s["efficiency"] for s in summaries]))
    label = ", ".join(f"{k} = {the_plan['points'][best]['values'][k]:g}" for k in keys)
    sections.append(_section("budget", f"Power budget at the best point ({label})", _figure(
        plots.plot_budget, [("best point", summaries[best]["budget"])], alt="budget of the best point")
        + f"<p>the same stack with a flat surface (exact): efficiency {_f(summaries[best]['flat_baseline'])}</p>"))
    sections.append(_section("farfield", f"Far field at the best point ({label})", _farfield(summaries[best])))
    sections.append(_section("cautions", "Cautions", f'<div class="caution">{CAUTIONS}</div>'))
    return _page(f"Light extraction sweep: {the_plan['case_file']}", sections)


def _sweep_table(the_plan, summaries, keys):
    extra = ["collected"] if "collected" in summaries[0] else []
    rows = [[f"{point['values'][k]:g}" for k in keys] + [_f(s["efficiency"])] + [_f(s["budget"][c]) for c in CATEGORIES]
            + [_f(s["flat_baseline"])] + [_f(s[k]) for k in extra]
            for point, s in zip(the_plan["points"], summaries)]
    return _table(keys + ["efficiency"] + list(CATEGORIES) + ["flat baseline"] + extra, rows, names=0)
