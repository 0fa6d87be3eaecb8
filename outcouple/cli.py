"""``outcouple``: the command line. It only parses, dispatches and prints.

    outcouple check CASE
    outcouple run CASE [-o FILE.h5] [--json] [--na NA] [--fields] [--workers N] [--quiet]
    outcouple show FILE.h5 [--json] [--na NA]
    outcouple reference CASE [--json] [--na NA]
    outcouple rays CASE [--rays N] [--lateral absorbing|periodic] [--seed S] [--json] [--na NA]
    outcouple compare CASE --vary KEY=START:STOP:COUNT [--tolerance T] [--rays N] [-o DIR] [--json]
    outcouple sweep CASE --out DIR [--engine local] [--workers N] [--quiet]
    outcouple status DIR | collect DIR | plot DIR [-o FILE.png]
    outcouple report RESULT.h5|DIR [-o FILE.html] [--na NA]
    outcouple converge CASE [--tolerance T] [--resolutions R1,R2[,R3]] [--json]

Bad input: one message naming the file and key on standard error, exit
code 2, no traceback, no result file.
"""

import argparse
import json
import os
import sys
import time
from pathlib import Path

import tomli_w

from . import __version__
from fdtd_cases.case import load_case, resolved_dict
from fdtd_cases.errors import CaseError
from fdtd_cases.layout import make_layout
from fdtd_cases.runner import plan_jobs, run_jobs

EXIT_INPUT = 2


def _load(path):
    case, text = load_case(path)
    layout = make_layout(case, source=path)
    for key, message in layout.warnings:
        print(f"warning: {path}: {key}: {message}", file=sys.stderr)
    return case, text, layout


def _human_bytes(n):
    return f"{n / 2**20:.0f} MiB" if n < 2**30 else f"{n / 2**30:.1f} GiB"


def cmd_check(args):
    case, _, layout = _load(args.case)
    jobs = plan_jobs(case, layout)
    est = layout.estimate(case.chip.index)
    workers = max(1, min(os.cpu_count() or 1, len(jobs)))
    ppw = layout.points_per_wavelength
    lam = layout.wavelengths
    print(f"{args.case}: valid")
    print(f"  wavelengths        {len(lam)} from {lam.min():.4g} to {lam.max():.4g} um")
    print(f"  resolution         {layout.resolution:g} points/um (grid step {1000 / layout.resolution:.2f} nm)")
    print(f"  points/wavelength  chip {ppw['chip']:.1f}, ambient {ppw['ambient']:.1f} (at the shortest wavelength)")
    print(f"  cell               {layout.cell_x:.3f} x {layout.cell_y:.3f} um including PML {layout.pml:.3f} um"
          f" = {layout.grid_points:,} grid points")
    print(f"  monitors           top y = {layout.y_top:.3f} um, bottom y = {layout.y_bottom:.3f} um, "
          f"sides x = +/-{layout.x_side:.3f} um, emitter contour half-width {layout.contour:.3f} um")
    print(f"  jobs               {len(jobs)} ({', '.join(case.emitter.orientations())} x {len(case.emitter.x)} "
          f"position(s)); mirror symmetry: {'yes (x = 0 jobs)' if layout.symmetric else 'no'}")
    print(f"  estimate per job   about {est['time_steps']:,} time steps, {est['seconds']:.0f} s "
          f"(without symmetry), {_human_bytes(est['memory_bytes'])}")
    total = est["seconds"] * len(jobs) / workers
    print(f"  estimate in all    about {total:.0f} s on {workers} worker(s)")
    if case.collection is not None:
        print(f"  collection         the fan within +/-{case.collection.degrees(case.ambient.index):.1f} deg of the "
              "normal in the ambient (reported after the run)")
    return 0


def _with_na(case, na):
    """The case with the command line's collection cone, which overrides a [collection] table."""
    from fdtd_cases.case import Collection

    if na is None:
        return case
    if na > case.ambient.index:
        raise CaseError("command line", "--na", f"is {na:g}, more than the ambient index {case.ambient.index:g} "
                        "(na = n_ambient sin(half-angle))")
    return case.model_copy(update={"collection": Collection(na=na)})


def _versions(raw):
    # Meep is imported only in the workers (it prints on standard output), which report its version.
    return {"package_version": __version__, "meep_version": raw[0]["meep_version"]}


def cmd_run(args):
    from postprocess.analysis import analyse, format_report
    from postprocess.results import write_results

    case, text, layout = _load(args.case)
    case = _with_na(case, args.na)
    out = Path(args.output) if args.output else Path(Path(args.case).stem + ".h5")
    if not out.parent.is_dir():
        raise CaseError("command line", "-o", f"the folder of {out} does not exist")
    jobs = plan_jobs(case, layout)
    if not args.quiet:
        print(f"running {len(jobs)} job(s) of {args.case}", file=sys.stderr)
    started = time.perf_counter()
    raw = run_jobs(case, layout, jobs, workers=args.workers, progress=not args.quiet, field_map=args.fields)
    merged = [{**job, **result} for job, result in zip(jobs, raw)]
    summary = analyse(case, merged, layout.wavelengths, layout.resolution)
    summary["result_file"] = str(out)
    write_results(out, case_file=args.case, case_text=text, resolved_toml=tomli_w.dumps(resolved_dict(case)),
                  layout=layout, jobs=jobs, raw=raw, summary=summary, versions=_versions(raw))
    elapsed = time.perf_counter() - started
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        print(format_report(summary, f"{args.case}: {len(jobs)} job(s) in {elapsed:.1f} s -> {out}"))
    return 0


def cmd_show(args):
    from postprocess.analysis import analyse, format_report
    from postprocess.results import read_results
    from fdtd_cases.case import parse_case
    import tomllib

    data = read_results(args.result)
    case = parse_case(tomllib.loads(data["case_resolved"]), source=f"{args.result}:/case/resolved")
    case = _with_na(case, args.na)
    summary = analyse(case, data["jobs"], data["grid"]["wavelengths"], data["grid"]["resolution"])
    summary["result_file"] = str(args.result)
    if args.json:
        print(json.dumps(summary, indent=2))
    else:
        a = data["attrs"]
        print(format_report(summary, f"{args.result}: case {a['case_file']}, {len(data['jobs'])} job(s), "
                                     f"outcouple {a['package_version']}, Meep {a['meep_version']}"))
    return 0


def cmd_reference(args):
    from references.reference import case_reference, CATEGORIES

    from postprocess.analysis import collection_summary

    case, _ = load_case(args.case)
    case = _with_na(case, args.na)
    result = case_reference(case)
    result["case"] = str(args.case)
    if case.collection is not None:
        result.update(collection_summary(case, result))
    if args.json:
        print(json.dumps(result, indent=2))
        return 0
    line, dot = result, result["point_dipole"]
    flat = case.surface.pattern == "flat"
    print(f"{args.case}: {result['kind']}")
    if not flat:
        print("  the pattern itself is not modelled here: these numbers bracket it, they do not predict it")
    print(f"\n  {'':>22}  {'line emitter (2-D)':>18}  {'point dipole (3-D)':>18}")
    print(f"  {'extraction efficiency':>22}  {line['efficiency']:>18.4f}  {dot['efficiency']:>18.4f}")
    for name in line["by_orientation"]:
        print(f"  {name:>22}  {line['by_orientation'][name]:>18.4f}  {dot['by_orientation'][name]:>18.4f}")
    for key in CATEGORIES:
        print(f"  {'budget: ' + key:>22}  {line['budget'][key]:>18.4f}  {dot['budget'][key]:>18.4f}")
    print(f"  {'emission factor':>22}  {line['emission_factor']:>18.4f}  {dot['emission_factor']:>18.4f}")
    if line["balance_error"] is not None:
        print(f"  {'balance error':>22}  {line['balance_error']:>18.1e}  {dot['balance_error']:>18.1e}"
              "   (|emitted - top - bottom - guided| / emitted, guided power from the mode poles)")
    cones = result["escape_cone"]
    print(f"  {'escape cone, ideal':>22}  {cones['line_emitter']['ideal']:>18.4f}  "
          f"{cones['point_dipole']['ideal']:>18.4f}   (thick chip, no interface loss)")
    print(f"  {'escape cone, Fresnel':>22}  {cones['line_emitter']['with_fresnel']:>18.4f}  "
          f"{cones['point_dipole']['with_fresnel']:>18.4f}   (thick chip, no interference)")
    if not flat:
        bound = result["randomising_bound"]
        print(f"  {'randomising multi-pass':>22}  {bound['line_emitter']:>18.4f}  {bound['point_dipole']:>18.4f}"
              "   (an ideal randomising top over this chip and back)")
    if "collected" in result:
        _print_collected(result, "line emitter")
    if line["guided_modes"] and any(line["guided_modes"].values()):
        print(f"\n  guided modes excited at {line['wavelengths'][0]:g} um (effective indices):")
        for pol, label in (("s", "s (E along z)"), ("p", "p (H along z)")):
            if line["guided_modes"].get(pol):
                print(f"    {label}: " + ", ".join(f"{n:.4f}" for n in line["guided_modes"][pol]))
    print(f"\n  method: {result['method']}")
    return 0


PERIODIC = ("flat", "grating", "triangle", "sine")


def cmd_rays(args):
    from references import raytrace

    from postprocess.analysis import collection_summary

    case, _ = load_case(args.case)
    case = _with_na(case, args.na)
    layout = make_layout(case, source=args.case, fdtd=False)
    if args.lateral == "periodic" and case.surface.pattern not in PERIODIC:
        raise CaseError("command line", "--lateral", f"periodic needs a periodic pattern ({', '.join(PERIODIC)}), "
                        f"not {case.surface.pattern!r}")
    if not args.quiet:
        print(f"tracing {args.rays} rays per job of {args.case}", file=sys.stderr)
    started = time.perf_counter()
    result = raytrace.run_case(case, layout, rays=args.rays, lateral=args.lateral, seed=args.seed)
    elapsed = time.perf_counter() - started
    result["lateral"] = args.lateral
    result["events_per_second"] = result["events"] / elapsed if elapsed > 0 else None
    if case.collection is not None:
        result.update(collection_summary(case, result))
    if args.json:
        print(json.dumps(result, indent=2))
        return 0
    print(f"{args.case}: ray optics, {result['rays']:,} rays, {result['events']:,} interactions in {elapsed:.1f} s "
          f"({args.lateral} lateral boundaries)")
    err = result["statistical_error"]
    print(f"\n  extraction efficiency   {result['efficiency']:.4f} +/- {err:.4f} (one standard error)")
    for name, value in result["by_orientation"].items():
        print(f"  {name:>22}  {value:.4f}")
    b = result["budget"]
    print("\n  budget (fractions of the emitted power):")
    print("    " + "   ".join(f"{k} {b[k]:.4f}" for k in ("top", "bottom", "sides", "absorbed", "truncated")))
    if "collected" in result:
        _print_collected(result, "rays")
    need = result["rays_for_half_percent"]
    if need:
        print(f"  rays per job for a 0.5% statistical error: about {need:,}")
    print("\n  ray optics: no interference, no diffraction, no change of the emitter's emission by its surroundings")
    return 0


def _print_collected(result, what):
    c = result["collection"]
    print(f"\n  collected within NA {c['na']:.3f} (+/-{c['half_angle']:.1f} deg), {what}: {result['collected']:.4f} "
          f"of the emitted power; a Lambertian pattern with the same escaped power: {c['lambertian']:.4f}")


def cmd_compare(args):
    import tomllib
    from . import compare

    key, values = compare.parse_vary(args.vary)
    case, text = load_case(args.case)
    data = tomllib.loads(text)
    points = compare.prepare(data, args.case, key, values)
    out_dir = Path(args.output) if args.output else Path(Path(args.case).stem + "_compare")
    if not args.quiet:
        jobs = sum(len(plan_jobs(c, lay)) for _, c, lay in points)
        print(f"comparing {len(points)} values of {key}: {jobs} FDTD job(s), then rays", file=sys.stderr)
    rows = compare.run(points, key, args.tolerance, args.rays, args.workers, not args.quiet)
    csv_path, png_path = compare.write_outputs(rows, key, out_dir, f"{Path(args.case).name}: {key}")
    if args.json:
        print(json.dumps({"key": key, "tolerance": args.tolerance, "rows": rows, "csv": str(csv_path),
                          "plot": str(png_path)}, indent=2))
        return 0
    print(f"{args.case}: full wave against ray optics over {key} (tolerance {100 * args.tolerance:g}%)")
    print(f"\n  {key:>16}  {'/ chip wl':>9}  {'FDTD':>8}  {'rays':>8}  {'+/-':>7}  {'diff':>8}")
    for r in rows:
        flag = "  differ" if r["differs"] else ""
        print(f"  {r[key]:>16.4g}  {r[key] / r['chip_wavelength']:>9.3f}  {r['fdtd']:>8.4f}  {r['rays']:>8.4f}  "
              f"{r['rays_error']:>7.4f}  {100 * r['difference']:>+7.1f}%{flag}")
    print(f"\n  written: {csv_path}, {png_path}")
    return 0


def cmd_sweep(args):
    import tomllib
    from . import sweep

    case, text = load_case(args.case)
    the_plan = sweep.plan(tomllib.loads(text), args.case)
    out = Path(args.out)
    if (out / sweep.PLAN).is_file():
        old = sweep.read_plan(out)
        if old["points"] != the_plan["points"]:
            raise CaseError("command line", "--out", f"{out} holds a different sweep; use a new folder "
                            "(job results are kept by id, so nothing valid would be lost, but the folder's "
                            "plan would no longer describe them)")
    sweep.write_plan(out, the_plan)
    total = sum(len(p["jobs"]) for p in the_plan["points"])
    if args.engine == "slurm":
        return _sweep_slurm(args, case, out, total)
    _, counts, _ = sweep.status(out)
    if not args.quiet:
        print(f"sweep of {len(the_plan['points'])} point(s), {total} job(s): {counts['done']} already done, "
              f"running {total - counts['done']}", file=sys.stderr)
    ran = sweep.run_local(out, workers=args.workers, progress=not args.quiet)
    _, counts, failed = sweep.status(out)
    print(f"{out}: {counts['done']} of {total} job(s) done ({ran} run now), {counts['failed']} failed")
    _print_failed(failed)
    return 0 if not failed else 1


def _print_failed(failed):
    for values, job, reason in failed:
        print(f"  failed: {job['id']} ({job['orientation']}, x = {job['x']:g}) at "
              + ", ".join(f"{k} = {v:g}" for k, v in values.items()) + f": {reason}")


def _sweep_slurm(args, case, out, total):
    from . import sweep

    cluster = case.cluster.model_dump()
    for key in ("partition", "time", "mem", "cpus", "jobs_per_task"):
        if getattr(args, key) is not None:
            cluster[key] = getattr(args, key)
    cluster["extra"] = cluster["extra"] + (args.sbatch or [])
    job, count = sweep.submit_slurm(out, cluster, sys.executable)
    if job is None:
        print(f"{out}: nothing to submit (every job is done or queued)")
    else:
        print(f"{out}: submitted SLURM job array {job} with {count} task(s) "
              f"({cluster['jobs_per_task']} job(s) per task; the sweep has {total} job(s))")
    if args.wait:
        deadline = time.monotonic() + args.wait
        while sweep.status(out)[1]["running"] and time.monotonic() < deadline:
            time.sleep(2)
        _, counts, failed = sweep.status(out)
        print(f"{out}: done {counts['done']}, running {counts['running']}, failed {counts['failed']}, "
              f"missing {counts['missing']}")
        return 0 if counts["done"] == total else 1
    return 0


def cmd_status(args):
    from . import sweep

    the_plan, counts, failed = sweep.status(args.dir)
    total = sum(counts.values())
    print(f"{args.dir}: {total} job(s): done {counts['done']}, running {counts['running']}, "
          f"failed {counts['failed']}, missing {counts['missing']}")
    _print_failed(failed)
    return 0


def cmd_collect(args):
    from postprocess.collect import IncompleteSweep, collect
    from . import sweep

    the_plan = sweep.read_plan(args.dir)
    try:
        h5_path, csv_path, summaries = collect(args.dir, the_plan)
    except IncompleteSweep as exc:
        raise CaseError(args.dir, "", str(exc)) from None
    print(f"{args.dir}: {len(summaries)} point(s) collected -> {h5_path}, {csv_path}")
    return 0


def cmd_plot(args):
    from postprocess.collect import read_sweep
    from postprocess.plots import plot_sweep

    path = Path(args.dir) / "sweep.h5"
    if not path.is_file():
        raise CaseError(args.dir, "", "has no sweep.h5; run 'outcouple collect' first")
    out = Path(args.output) if args.output else Path(args.dir) / "sweep.png"
    plot_sweep(read_sweep(path), out)
    print(f"{out}")
    return 0


def cmd_report(args):
    import tomllib
    from postprocess import report
    from postprocess.results import read_results
    from fdtd_cases.case import parse_case

    source = Path(args.source)
    if source.is_dir():
        from postprocess.collect import IncompleteSweep, collect, read_sweep
        from . import sweep

        the_plan = sweep.read_plan(source)
        if args.na is not None:
            first = parse_case(tomllib.loads(the_plan["points"][0]["case_toml"]), source=f"{source}/plan.json")
            the_plan["collection"] = {"na": _with_na(first, args.na).collection.na}
        try:
            _, _, summaries = collect(source, the_plan)
        except IncompleteSweep as exc:
            raise CaseError(source, "", str(exc)) from None
        text = report.sweep_report(source, the_plan, summaries, read_sweep(source / "sweep.h5"))
        out = Path(args.output) if args.output else source / "report.html"
    else:
        data = read_results(source)
        case = parse_case(tomllib.loads(data["case_resolved"]), source=f"{source}:/case/resolved")
        case = _with_na(case, args.na)
        layout = make_layout(case, source=f"{source}:/case/resolved")
        text = report.result_report(data, case, layout)
        out = Path(args.output) if args.output else source.with_suffix(".html")
    if not out.parent.is_dir():
        raise CaseError("command line", "-o", f"the folder of {out} does not exist")
    partial = out.with_name(out.name + ".partial")
    partial.write_text(text, encoding="utf-8")
    os.replace(partial, out)
    print(f"{out}")
    return 0


def cmd_converge(args):
    from . import converge

    case, _ = load_case(args.case)
    make_layout(case, source=args.case)  # the case's own grid must be valid before anything runs
    result = converge.run(case, args.case, args.resolutions, args.tolerance, args.workers, not args.quiet)
    which = "the case's resolution" if result["judged_is_case_resolution"] else "the finest resolution run"
    if args.json:
        print(json.dumps(result, indent=2))
        _converge_warning(args.case, result, which)
        return 0
    print(f"{args.case}: extraction efficiency at {len(result['levels'])} resolutions")
    exact = result["levels"][0]["exact"] is not None
    print(f"\n  {'points/um':>10}  {'pts/wl chip':>11}  {'efficiency':>10}  {'est. error':>10}"
          + (f"  {'exact':>8}" if exact else "") + f"  {'time/s':>7}")
    for row in result["levels"]:
        mark = "  <- the case's" if abs(row["resolution"] - result["case_resolution"]) < 1e-9 else ""
        print(f"  {row['resolution']:>10.4g}  {row['points_per_wavelength']:>11.1f}  {row['efficiency']:>10.4f}  "
              f"{row['error_estimate']:>10.4f}" + (f"  {row['exact']:>8.4f}" if exact else "")
              + f"  {row['wall_time']:>7.1f}{mark}")
    how = (f"observed order {result['order']:.2f}" if result["order_observed"]
           else f"assumed order {result['order']:g} (the Yee scheme's)")
    print(f"\n  extrapolated (Richardson, {how}): {result['extrapolated']:.4f}")
    if not result["asymptotic"]:
        print("  the three values do not converge in step: the grids are not in the asymptotic range; "
              "no error estimate is below the difference between the two finest")
    print(f"  estimated error at {which} ({result['judged_resolution']:g} points/um): "
          f"{result['relative_error']:.2%} (tolerance {result['tolerance']:.2%})")
    sys.stdout.flush()
    _converge_warning(args.case, result, which)
    return 0


def _converge_warning(case, result, which):
    if not result["converged"]:
        print(f"WARNING: {case}: {which} is not converged to {result['tolerance']:.2%}; raise "
              "grid.points_per_wavelength (or grid.resolution) and check again", file=sys.stderr)


def _resolution_list(text):
    try:
        values = [float(v) for v in text.split(",")]
    except ValueError:
        values = []
    if not 2 <= len(values) <= 3 or any(not v > 0 for v in values) or len(set(values)) != len(values):
        raise argparse.ArgumentTypeError(f"must be two or three different positive resolutions (points per um) "
                                         f"separated by commas, not {text!r}")
    return values


def _checked(convert, accept, wanted):
    """An argparse type: ``convert`` the text, keep it if ``accept`` says so, else say what is ``wanted``."""
    def parse(text):
        try:
            value = convert(text)
        except ValueError:
            value = None
        if value is None or not accept(value):
            raise argparse.ArgumentTypeError(f"must be {wanted}, not {text!r}")
        return value
    return parse


_fraction = _checked(float, lambda v: 0 < v < 1, "a fraction between 0 and 1")
_positive = _checked(float, lambda v: 0 < v < float("inf"), "a positive number")
_positive_int = _checked(int, lambda v: v >= 1, "a whole number of at least 1")


class _Parser(argparse.ArgumentParser):
    def error(self, message):
        self.print_usage(sys.stderr)
        print(f"error: command line: {message}", file=sys.stderr)
        sys.exit(EXIT_INPUT)


def _add_na(parser):
    parser.add_argument("--na", type=_positive, help="numerical aperture of a collection cone in the ambient "
                        "(overrides [collection])")


def build_parser():
    parser = _Parser(prog="outcouple", description="Light extraction from emitting chips by 2-D FDTD (Meep).")
    parser.add_argument("--version", action="version", version=f"outcouple {__version__}")
    sub = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)
    p = sub.add_parser("check", help="validate a case and print the derived grid and estimates")
    p.add_argument("case", help="TOML case file")
    p.set_defaults(func=cmd_check)
    p = sub.add_parser("run", help="run the FDTD jobs of a case and report the extraction efficiency")
    p.add_argument("case", help="TOML case file")
    p.add_argument("-o", "--output", help="result file (HDF5); default: CASE's name with .h5, here")
    p.add_argument("--json", action="store_true", help="print the summary as JSON on standard output")
    p.add_argument("--workers", type=_positive_int, help="worker processes (default: number of cores)")
    _add_na(p)
    p.add_argument("--fields", action="store_true", help="also save a picture of the field at the centre "
                   "wavelength (for 'outcouple report')")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(func=cmd_run)
    p = sub.add_parser("show", help="report the results stored in a result file")
    p.add_argument("result", help="HDF5 result file written by 'outcouple run'")
    _add_na(p)
    p.add_argument("--json", action="store_true", help="print the summary as JSON")
    p.set_defaults(func=cmd_show)
    p = sub.add_parser("reference", help="exact planar and closed-form reference values of a case (no FDTD)")
    p.add_argument("case", help="TOML case file")
    _add_na(p)
    p.add_argument("--json", action="store_true", help="print the values as JSON")
    p.set_defaults(func=cmd_reference)
    p = sub.add_parser("rays", help="ray-optics extraction on the same geometry (Monte Carlo, no FDTD)")
    p.add_argument("case", help="TOML case file")
    p.add_argument("--rays", type=_positive_int, default=20000, help="rays per job (default 20000)")
    p.add_argument("--lateral", choices=("absorbing", "periodic"), default="absorbing",
                   help="lateral boundaries: absorbing like the FDTD's (default) or periodic")
    p.add_argument("--seed", type=int, default=0, help="seed of the random numbers (default 0)")
    p.add_argument("--json", action="store_true", help="print the summary as JSON")
    _add_na(p)
    p.add_argument("--quiet", action="store_true", help="no progress message")
    p.set_defaults(func=cmd_rays)
    p = sub.add_parser("compare", help="FDTD against ray optics over a range of one case parameter")
    p.add_argument("case", help="TOML case file")
    p.add_argument("--vary", required=True, help="KEY=START:STOP:COUNT, KEY a dotted case key such as surface.period")
    p.add_argument("--tolerance", type=_fraction, default=0.05, help="relative difference that counts (default 0.05)")
    p.add_argument("--rays", type=_positive_int, default=20000, help="rays per job (default 20000)")
    p.add_argument("-o", "--output", help="output folder (default: CASE's name with _compare)")
    p.add_argument("--workers", type=_positive_int, help="FDTD worker processes (default: number of cores)")
    p.add_argument("--json", action="store_true", help="print the table as JSON")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(func=cmd_compare)
    p = sub.add_parser("sweep", help="run (or resume) the sweep of a case's [sweep] table")
    p.add_argument("case", help="TOML case file with a [sweep] table")
    p.add_argument("--out", required=True, help="sweep folder (plan, one result file per job)")
    p.add_argument("--engine", choices=("local", "slurm"), default="local",
                   help="local: worker processes here (waits); slurm: one sbatch job array (returns at once)")
    p.add_argument("--workers", type=_positive_int, help="local worker processes (default: number of cores)")
    p.add_argument("--partition", help="slurm: partition (overrides [cluster] partition)")
    p.add_argument("--time", help="slurm: time limit per task, e.g. 00:30:00")
    p.add_argument("--mem", help="slurm: memory per task, e.g. 2G")
    p.add_argument("--cpus", type=_positive_int, help="slurm: CPUs per task")
    p.add_argument("--sbatch", action="append", metavar="LINE", help="slurm: an extra #SBATCH line (repeatable)")
    p.add_argument("--jobs-per-task", type=_positive_int, help="slurm: sweep jobs per array task (default 1)")
    p.add_argument("--wait", type=_positive_int, metavar="SECONDS",
                   help="slurm: wait up to SECONDS for the array to finish, then report")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(func=cmd_sweep)
    for name, func, text in (("status", cmd_status, "done / failed / missing jobs of a sweep folder"),
                             ("collect", cmd_collect, "one data set (sweep.h5, sweep.csv) from a finished sweep")):
        p = sub.add_parser(name, help=text)
        p.add_argument("dir", help="sweep folder")
        p.set_defaults(func=func)
    p = sub.add_parser("report", help="one self-contained HTML report of a result file or a sweep folder")
    p.add_argument("source", help="HDF5 result file of 'outcouple run', or a sweep folder")
    p.add_argument("-o", "--output", help="HTML file (default: RESULT with .html, or DIR/report.html)")
    _add_na(p)
    p.set_defaults(func=cmd_report)
    p = sub.add_parser("converge", help="the case at two or three resolutions, extrapolated, with a verdict")
    p.add_argument("case", help="TOML case file")
    p.add_argument("--resolutions", type=_resolution_list, metavar="R1,R2[,R3]",
                   help="points per um (default: the case's and 0.8 and 0.64 of it)")
    p.add_argument("--tolerance", type=_fraction, default=0.02,
                   help="relative error of the case's resolution that counts as converged (default 0.02)")
    p.add_argument("--workers", type=_positive_int, help="worker processes (default: number of cores)")
    p.add_argument("--json", action="store_true", help="print the result as JSON")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(func=cmd_converge)
    p = sub.add_parser("plot", help="efficiency against one or two swept keys, from sweep.h5")
    p.add_argument("dir", help="sweep folder (after collect)")
    p.add_argument("-o", "--output", help="PNG file (default DIR/sweep.png)")
    p.set_defaults(func=cmd_plot)
    return parser


def main(args=None):
    from postprocess.results import ResultFileError

    parsed = build_parser().parse_args(args)
    try:
        return parsed.func(parsed)
    except CaseError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except ResultFileError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        print("interrupted; no result file written", file=sys.stderr)
        return 130
    except BrokenPipeError:
        # The reader went away (for example `| head`): no traceback; silence the final flush too.
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0


if __name__ == "__main__":
    sys.exit(main())
