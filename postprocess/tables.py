"""Plain-text tables: what the command line prints for each command, from plain data.

Every function takes the JSON-ready dict the public API returns and gives
back text; none computes a number of its own (the numbers are computed, and
tested, where the dict is made).
"""

import textwrap

import numpy as np

from fdtd_cases.case import CATEGORIES

from . import farfield


def _pct(a, b):
    return f"{100 * (a / b - 1):+.2f}%" if b else "n/a"


def _share(value):
    """A budget share in 8 columns, 4 decimals; a rounding residue prints as 0.0000, not -0.0000."""
    return f"{round(value, 4) + 0.0:>8.4f}"


def format_report(summary, title):
    """Plain-text tables of a summary."""
    ref = summary.get("reference")
    out = [title, ""]
    if summary.get("source") == "point":
        out += [f"  3-D point dipole(s): each the integral of {summary['kz_nodes']} 2-D runs over the out-of-plane "
                "wavenumber, per orientation, position and wavelength", ""]
    grids = summary.get("grids")
    if grids:
        fine, coarse = grids["resolution"]
        out += [f"  two grids ({fine:g} and {coarse:g} points/um, every job on each): the numbers below are their "
                f"Richardson extrapolation; the finer grid alone gave {grids['efficiency'][0]:.4f}, the coarser "
                f"{grids['efficiency'][1]:.4f}", ""]
    head = f"  {'wavelength/um':>13}  {'efficiency':>10}"
    if ref:
        head += f"  {'exact':>8}  {'diff':>8}"
    out.append(head)
    for i, (lam, eff) in enumerate(zip(summary["wavelengths"], summary["efficiency_spectrum"])):
        row = f"  {lam:>13.4f}  {eff:>10.4f}"
        if ref:
            row += f"  {ref['efficiency_spectrum'][i]:>8.4f}  {_pct(eff, ref['efficiency_spectrum'][i]):>8}"
        out.append(row)
    out += ["", f"  {'orientation':>13}  {'efficiency':>10}" + (f"  {'exact':>8}  {'diff':>8}" if ref else "")]
    for name, eff in summary["by_orientation"].items():
        row = f"  {name:>13}  {eff:>10.4f}"
        if ref:
            row += f"  {ref['by_orientation'][name]:>8.4f}  {_pct(eff, ref['by_orientation'][name]):>8}"
        out.append(row)
    if len(summary["by_orientation"]) > 1:
        row = f"  {'combined':>13}  {summary['efficiency']:>10.4f}"
        if ref:
            row += f"  {ref['efficiency']:>8.4f}  {_pct(summary['efficiency'], ref['efficiency']):>8}"
        out.append(row)
    if summary.get("grid_error"):
        out.append(f"  grid: {_grid_error(summary['grid_error'])}")
    if summary.get("positions"):
        p = summary["positions"]
        out.append(f"  over {len(p['x'])} emitter positions: {p['min']:.4f} to {p['max']:.4f} per position, mean "
                   f"{p['mean']:.4f}, standard deviation {p['spread']:.4f} (the efficiency above is their sum over "
                   "sum: each position weighted by its emitted power)")
    b = summary["budget"]
    out += ["", "  power budget (fractions of the emitted power, all jobs and wavelengths):",
            f"    {'':>8}  {'top':>8}  {'bottom':>8}  {'sides':>8}  {'absorbed':>8}",
            f"    {'FDTD':>8}  " + "  ".join(_share(b[k]) for k in CATEGORIES)]
    if ref:
        out.append(f"    {'exact':>8}  " + "  ".join(_share(ref['budget'][k]) for k in CATEGORIES))
    if summary["balance_error"] is not None:
        out.append(f"    balance error (lossless: |emitted - top - bottom - sides| / emitted) "
                   f"{summary['balance_error']:.4f}")
    if ref and b["sides"] > 0.01 and ref["budget"]["sides"] < 0.5 * b["sides"]:
        out += ["    FDTD sides vs exact bottom: the exact stack is unbounded, so all light going down is bottom;",
                f"    the finite FDTD domain counts what leaves through its lateral monitors as sides (bottom + "
                f"sides {b['bottom'] + b['sides']:.4f} against {ref['budget']['bottom'] + ref['budget']['sides']:.4f})"]
    out.append(f"  emission factor (emitted / bulk power, mean) {summary['emission_factor']:.4f}"
               + (f"   exact {ref['emission_factor']:.4f}" if ref else ""))
    if summary.get("point_dipole_baseline") is not None:
        out.append(f"  3-D context: a point dipole under the same stack with a flat surface (exact) escapes "
                   f"{summary['point_dipole_baseline']:.4f}; these 2-D numbers are a line emitter's")
    if summary["farfield"] is not None:
        out += _farfield_lines(summary)
    unstopped = [j for j in summary["jobs"] if j.get("stopped_by_decay") is False]
    if unstopped:
        out.append(f"  WARNING: {len(unstopped)} job(s) hit the run-time limit before the fields decayed; "
                   "results may be unconverged")
    if ref:
        out.append(f"  exact: {ref['method']}")
    return "\n".join(out)


def _angle(value):
    return "n/a" if value is None else f"{value:.1f}"


def _farfield_lines(summary):
    """The far-field and collection lines of the plain-text report."""
    ff, ref = summary["farfield"], summary.get("reference")
    angles, intensity = np.array(ff["angle"]), np.array(ff["intensity"])
    half = farfield.half_power_angle(angles, intensity)
    exact = (f" (exact {_angle(farfield.half_power_angle(ref['farfield']['angle'], ref['farfield']['intensity']))})"
             if ref else "")
    if "cuts" in ff:  # a point source: the hemisphere, 3-D cones
        cuts = ff["cuts"]
        brightest = {p: abs(float(cuts["angle"][int(np.argmax(cuts[p]))])) for p in ("xy", "zy")}
        out = ["", "  far field over the hemisphere (all dipoles and wavelengths; polar angles from the normal):",
               f"    half of the escaped power within a cone of {_angle(half)} deg half-angle{exact}; "
               "a Lambertian source: 45.0 deg",
               f"    brightest direction: +/-{brightest['xy']:.0f} deg in the x-y plane (across the pattern's lines), "
               f"+/-{brightest['zy']:.0f} deg in the z-y plane (along them)"]
    else:
        peak = float(angles[np.argmax(intensity)])
        out = ["", "  far field in the ambient (all jobs and wavelengths; angles from the normal):",
               f"    peak at {peak:+.0f} deg; half of the escaped power within +/-{_angle(half)} deg{exact}"
               "; a Lambertian pattern: +/-30.0 deg"]
    closure = summary["farfield_closure"]
    if closure is not None:
        out.append(f"    far-field integral against the top flux {closure:+.2%}")
        if abs(closure) > farfield.CLOSURE_WARN:
            out.append(f"  WARNING: the far field's integral differs from the top flux by {closure:+.1%}: light "
                       "crosses the top monitor near its ends; a wider grid.width gives a truer far field")
    if "collected" in summary:
        c = summary["collection"]
        row = (f"    collected within NA {c['na']:.3f} (+/-{c['half_angle']:.1f} deg): {summary['collected']:.4f}"
               f" of the emitted power")
        if c["of_escaped"] is not None:
            row += f" ({c['of_escaped']:.1%} of the escaped)"
        out.append(row)
        out.append(f"    {'':>10}Lambertian with the same escaped power: {c['lambertian']:.4f}"
                   + (f"; exact: {c['exact']:.4f}  diff {_pct(summary['collected'], c['exact'])}"
                      if "exact" in c else ""))
    return out


def _grid_error(info):
    """One line on the grid's expected error (outcouple check, run, show)."""
    if "resolutions" in info:
        return (f"about {100 * info['estimate']:.1f}% or less ({info['basis']}; {info['points_per_wavelength']:.1f} "
                "points per wavelength on the finer); 'outcouple converge' measures this case's own")
    return (f"about {100 * info['estimate']:.1f}% from the grid at {info['points_per_wavelength']:.1f} points per "
            f"wavelength ({info['basis']}); 'outcouple converge' measures this case's own")


def duration(seconds):
    """A time span as people read it: seconds below two minutes, minutes below two hours, else hours."""
    if seconds < 120:
        return f"{seconds:.0f} s" if seconds >= 10 else f"{seconds:.1f} s"
    if seconds < 7200:
        return f"{seconds / 60:.0f} min"
    return f"{seconds / 3600:,.1f} h"


def _human_bytes(n):
    return f"{n / 2**20:.0f} MiB" if n < 2**30 else f"{n / 2**30:.1f} GiB"


def _kz_runs(facts):
    if facts.get("source") != "point":
        return ""
    dipoles = len(facts["orientations"]) * facts["positions"] * (2 if facts.get("second_grid") else 1)
    return (f" x {len(facts['wavelengths'])} wavelength(s), point dipoles: about "
            f"{facts['jobs'] / (dipoles * len(facts['wavelengths'])):.0f} kz runs each, the slowest several times "
            "the estimate")


THICK_HINT_SECONDS = 24 * 3600.0
"""``check`` points to ``multipass`` when the FDTD of a case would take longer than this."""


def format_check(facts):
    """``outcouple check``: the validated case's grid, jobs and estimates."""
    ppw, lam = facts["points_per_wavelength"], facts["wavelengths"]
    est = facts["estimate"]
    out = [f"{facts['case_file']}: valid",
           f"  wavelengths        {len(lam)} from {min(lam):.4g} to {max(lam):.4g} um",
           f"  resolution         {facts['resolution']:g} points/um (grid step {1000 / facts['resolution']:.2f} nm)",
           f"  points/wavelength  chip {ppw['chip']:.1f}, ambient {ppw['ambient']:.1f} (at the shortest wavelength)",
           f"  cell               {facts['cell_x']:.3f} x {facts['cell_y']:.3f} um including PML {facts['pml']:.3f} um"
           f" = {facts['grid_points']:,} grid points",
           f"  monitors           top y = {facts['y_top']:.3f} um, bottom y = {facts['y_bottom']:.3f} um, "
           f"sides x = +/-{facts['x_side']:.3f} um, emitter contour half-width {facts['contour']:.3f} um",
           f"  jobs               {facts['jobs']} ({', '.join(facts['orientations'])} x {facts['positions']} "
           f"position(s){_kz_runs(facts)}); mirror symmetry: {'yes (x = 0 jobs)' if facts['symmetric'] else 'no'}",
           f"  estimate per job   about {est['time_steps']:,} time steps, {duration(est['seconds'])} "
           f"(without symmetry), {_human_bytes(est['memory_bytes'])}",
           f"  estimate in all    about {duration(facts['seconds_in_all'])} on {facts['workers']} worker(s)"]
    if facts["seconds_in_all"] > THICK_HINT_SECONDS:
        out.append("  thick chip?        an FDTD this long is not meant to run here; 'outcouple multipass' puts the "
                   "top's full-wave response into a multi-pass model of the whole chip in minutes")
    if facts.get("second_grid"):
        out.append(f"  second grid        {facts['second_grid']:g} points/um (grid.extrapolate): every job runs on "
                   "both grids (counted above) and the run reports their Richardson extrapolation")
    if facts.get("grid_error"):
        alone = "the finer grid alone: " if facts.get("second_grid") else ""
        out.append(f"  expected accuracy  {alone}{_grid_error(facts['grid_error'])}")
    needed = facts.get("positions_needed")
    if needed:
        given = facts["positions"]
        out.append(f"  positions          {given} given; averaging over the period to about 1% takes {needed} "
                   f"(x = {{ across = \"period\", count = {needed} }})"
                   + ("" if given >= needed else "; one position's answer depends on where in the period it sits"))
    if facts.get("sweep"):
        sweep = facts["sweep"]
        out.append(f"  sweep              valid: {sweep['points']} point(s) ({sweep['mode']} of "
                   f"{', '.join(sweep['axes'])}), {sweep['jobs']} job(s) in all; the lines above are the base case")
    if facts.get("collection_half_angle") is not None:
        shape = "cone" if facts.get("source") == "point" else "fan"
        out.append(f"  collection         the {shape} within +/-{facts['collection_half_angle']:.1f} deg of the "
                   "normal in the ambient (reported after the run)")
    return "\n".join(out)


def _collected_line(result, what):
    c = result["collection"]
    return (f"\n  collected within NA {c['na']:.3f} (+/-{c['half_angle']:.1f} deg), {what}: {result['collected']:.4f} "
            f"of the emitted power; a Lambertian pattern with the same escaped power: {c['lambertian']:.4f}")


def format_reference(result):
    """``outcouple reference``: line emitter and point dipole side by side, cones and bounds."""
    line, dot = result, result["point_dipole"]
    flat = "randomising_bound" not in result
    out = [f"{result['case']}: {result['kind']}"]
    if not flat:
        out.append("  the pattern itself is not modelled here: these numbers bracket it, they do not predict it")
    out.append(f"\n  {'':>22}  {'line emitter (2-D)':>18}  {'point dipole (3-D)':>18}")
    out.append(f"  {'extraction efficiency':>22}  {line['efficiency']:>18.4f}  {dot['efficiency']:>18.4f}")
    for name in line["by_orientation"]:
        out.append(f"  {name:>22}  {line['by_orientation'][name]:>18.4f}  {dot['by_orientation'][name]:>18.4f}")
    for key in CATEGORIES:
        out.append(f"  {'budget: ' + key:>22}  {line['budget'][key]:>18.4f}  {dot['budget'][key]:>18.4f}")
    out.append(f"  {'emission factor':>22}  {line['emission_factor']:>18.4f}  {dot['emission_factor']:>18.4f}")
    if line["balance_error"] is not None:
        out.append(f"  {'balance error':>22}  {line['balance_error']:>18.1e}  {dot['balance_error']:>18.1e}"
                   "   (|emitted - top - bottom - guided| / emitted, guided power from the mode poles)")
    cones = result["escape_cone"]
    out.append(f"  {'escape cone, ideal':>22}  {cones['line_emitter']['ideal']:>18.4f}  "
               f"{cones['point_dipole']['ideal']:>18.4f}   (thick chip, no interface loss)")
    out.append(f"  {'escape cone, Fresnel':>22}  {cones['line_emitter']['with_fresnel']:>18.4f}  "
               f"{cones['point_dipole']['with_fresnel']:>18.4f}   (thick chip, no interference)")
    if not flat:
        bound = result["randomising_bound"]
        out.append(f"  {'randomising multi-pass':>22}  {bound['line_emitter']:>18.4f}  {bound['point_dipole']:>18.4f}"
                   "   (an ideal randomising top over this chip and back)")
    if "collected" in result:
        out.append(_collected_line(result, "line emitter"))
    if line["guided_modes"] and any(line["guided_modes"].values()):
        out.append(f"\n  guided modes excited at {line['wavelengths'][0]:g} um (effective indices):")
        for pol, label in (("s", "s (E along z)"), ("p", "p (H along z)")):
            modes = line["guided_modes"].get(pol)
            if modes:
                text = f"{label}, {len(modes)} mode(s): " + ", ".join(f"{n:.4f}" for n in modes)
                out.append(textwrap.fill(text, width=100, initial_indent="    ", subsequent_indent="      "))
    out.append(f"\n  method: {result['method']}")
    return "\n".join(out)


def format_rays(result):
    """``outcouple rays``: the ray-optics efficiency, budget and statistics."""
    kind = "3-D rays of point dipoles" if result.get("source") == "point" else "rays in the x-y plane (line emitters)"
    out = [f"{result['case']}: ray optics, {kind}: {result['rays']:,} rays, {result['events']:,} interactions in "
           f"{result['elapsed']:.1f} s ({result['lateral']} lateral boundaries)"]
    err = result["statistical_error"]
    out.append(f"\n  extraction efficiency   {result['efficiency']:.4f} +/- {err:.4f} (one standard error)")
    for name, value in result["by_orientation"].items():
        out.append(f"  {name:>22}  {value:.4f}")
    b = result["budget"]
    out.append("\n  budget (fractions of the emitted power):")
    out.append("    " + "   ".join(f"{k} {b[k]:.4f}" for k in ("top", "bottom", "sides", "absorbed", "truncated")))
    if "collected" in result:
        out.append(_collected_line(result, "rays"))
    need = result["rays_for_half_percent"]
    if need:
        out.append(f"  rays per job for a 0.5% statistical error: about {need:,}")
    out.append("\n  ray optics: no interference, no diffraction, no change of the emitter's emission by its surroundings")
    return "\n".join(out)


def format_multipass(result):
    """``outcouple multipass``: the thick chip's efficiency, budget, passes and the top's response."""
    t = result["top_response"]
    if t["source"] == "exact":
        how = "exact Fresnel coefficients of the flat top"
    else:
        how = (f"Meep, {t['runs']} periodic-cell runs at {t['resolution']:g} points/µm, period {t['period']:g} µm"
               + (f" (from the cache {t['cache_file']})" if t["cached"] else f", {duration(t['wall_time'])}"))
    out = [f"{result['case']}: multi-pass model of the thick chip, {result['angles']} angle bins; top response: {how}",
           f"\n  extraction efficiency   {result['efficiency']:.4f}"]
    for name, value in result["by_orientation"].items():
        out.append(f"  {name:>22}  {value:.4f}")
    out.append(f"  same chip, flat top      {result['flat']:.4f}")
    out.append(f"  ideal randomising top    {result['randomising']:.4f}")
    b = result["budget"]
    out.append("\n  budget (fractions of the emitted power):")
    out.append("    " + "   ".join(f"{k} {round(b[k], 4) + 0.0:.4f}"  # + 0.0: no "-0.0000" from rounding
                                   for k in ("top", "back", "absorbed_chip", "absorbed_metal", "absorbed_top", "trapped")))
    out.append(f"  passes carrying 99% of the escaped light: {result['passes_99']}")
    far = np.asarray(result["farfield"]["intensity"])
    if far.sum() > 0:
        angle = np.asarray(result["farfield"]["angle"])
        out.append(f"  far field: peak at {angle[int(np.argmax(far))]:+.1f} deg; "
                   f"{100 * far[np.abs(angle) < 30].sum() / far.sum():.0f}% of the escaped light within 30 deg")
    if result.get("sweep"):
        out.append("\n  the same top over the chip's thickness (µm) and absorption (1/cm):")
    for row in result.get("sweep", []):
        keys = "  ".join(f"{k} {row[k]:<10.4g}" for k in row if k.startswith("chip."))
        out.append(f"    {keys}  efficiency {row['efficiency']:.4f}  passes {row['passes_99']}")
    if "plot" in result:
        out.append(f"\n  written: {result['plot']}")
    out.append("\n  2-D, incoherent between passes, emitter far from the top (its near field does not reach it)")
    return "\n".join(out)


def format_compare(result):
    """``outcouple compare``: FDTD against rays, one row per value of the varied key."""
    key = result["key"]
    out = [f"{result['case']}: full wave against ray optics over {key} (tolerance {100 * result['tolerance']:g}%)",
           f"\n  {key:>16}  {'/ chip wl':>9}  {'FDTD':>8}  {'rays':>8}  {'+/-':>7}  {'diff':>8}"]
    for r in result["rows"]:
        flag = "  differ" if r["differs"] else ""
        out.append(f"  {r[key]:>16.4g}  {r[key] / r['chip_wavelength']:>9.3f}  {r['fdtd']:>8.4f}  {r['rays']:>8.4f}  "
                   f"{r['rays_error']:>7.4f}  {100 * r['difference']:>+7.1f}%{flag}")
    out.append(f"\n  written: {result['csv']}, {result['plot']}")
    return "\n".join(out)


def converge_judged(result):
    """Which resolution the convergence verdict is about, in words."""
    return "the case's resolution" if result["judged_is_case_resolution"] else "the finest resolution run"


def format_converge(result):
    """``outcouple converge``: the levels, the extrapolated value and the verdict."""
    out = [f"{result['case']}: extraction efficiency at {len(result['levels'])} resolutions"]
    exact = result["levels"][0]["exact"] is not None
    out.append(f"\n  {'points/um':>10}  {'pts/wl chip':>11}  {'efficiency':>10}  {'est. error':>10}"
               + (f"  {'exact':>8}" if exact else "") + f"  {'time/s':>7}")
    for row in result["levels"]:
        mark = "  <- the case's" if abs(row["resolution"] - result["case_resolution"]) < 1e-9 else ""
        out.append(f"  {row['resolution']:>10.4g}  {row['points_per_wavelength']:>11.1f}  {row['efficiency']:>10.4f}  "
                   f"{row['error_estimate']:>10.4f}" + (f"  {row['exact']:>8.4f}" if exact else "")
                   + f"  {row['wall_time']:>7.1f}{mark}")
    how = (f"observed order {result['order']:.2f}" if result["order_observed"]
           else f"assumed order {result['order']:g} (the Yee scheme's)")
    out.append(f"\n  extrapolated (Richardson, {how}): {result['extrapolated']:.4f}")
    if not result["asymptotic"]:
        out.append("  the three values do not converge in step: the grids are not in the asymptotic range; "
                   "no error estimate is below the difference between the two finest")
    out.append(f"  estimated error at {converge_judged(result)} ({result['judged_resolution']:g} points/um): "
               f"{result['relative_error']:.2%} (tolerance {result['tolerance']:.2%})")
    return "\n".join(out)


def failed_lines(failed):
    """One line per failed sweep job: id, orientation, position, point and reason."""
    return [f"  failed: {job['id']} ({job['orientation']}, x = {job['x']:g}) at "
            + ", ".join(f"{k} = {v:g}" for k, v in values.items()) + f": {reason}"
            for values, job, reason in failed]
