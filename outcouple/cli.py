"""``outcouple``: the command line. It parses, calls the public API (:mod:`outcouple.api`) and prints.

    outcouple check CASE
    outcouple run CASE [-o FILE.h5] [--json] [--na NA] [--fields] [--workers N] [--quiet]
    outcouple show FILE.h5 [--json] [--na NA]
    outcouple reference CASE [--json] [--na NA]
    outcouple rays CASE [--rays N] [--lateral absorbing|periodic] [--seed S] [--json] [--na NA]
    outcouple multipass CASE [--angles N] [--response fdtd|exact] [--vary KEY=START:STOP:COUNT[:log]] [--plot FILE.png] [--json]
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
from pathlib import Path

import outcouple
from outcouple import CaseError, ResultFileError, __version__
from outcouple.grid_convergence import DEFAULT_FACTORS, FINER_FACTORS, MIN_PPW_ERROR
from postprocess import tables

EXIT_INPUT = 2


def _warn(source, warnings):
    for key, message in warnings:
        print(f"warning: {source}: {key}: {message}", file=sys.stderr)


def _json(data):
    print(json.dumps(data, indent=2))


def cmd_check(args):
    facts = outcouple.check(args.case)
    _warn(args.case, facts["warnings"])
    print(tables.format_check(facts))
    return 0


def cmd_run(args):
    out = args.output or Path(args.case).stem + ".h5"
    case = outcouple.load_case(args.case)
    facts = outcouple.check(case)
    _warn(args.case, facts["warnings"])
    if not args.quiet:
        print(f"running {facts['jobs']} job(s) of {args.case}", file=sys.stderr)
    result = outcouple.run(case, workers=args.workers, fields=args.fields, progress=not args.quiet, output=out, na=args.na)
    if args.json:
        _json(result.to_dict())
    else:
        print(tables.format_report(result.to_dict(), f"{args.case}: {result.attrs['jobs']} job(s) in "
                                                     f"{tables.duration(result.attrs['elapsed'])} -> {out}"))
    return 0


def cmd_show(args):
    result = outcouple.show(args.result, na=args.na)
    if args.json:
        _json(result.to_dict())
    else:
        a = result.attrs
        print(tables.format_report(result.to_dict(), f"{args.result}: case {a['case_file']}, {a['jobs']} job(s), "
                                                     f"outcouple {a['package_version']}, Meep {a['meep_version']}"))
    return 0


def cmd_reference(args):
    result = outcouple.reference(args.case, na=args.na)
    print(json.dumps(result, indent=2) if args.json else tables.format_reference(result))
    return 0


def cmd_rays(args):
    if not args.quiet:
        print(f"tracing {args.rays} rays per job of {args.case}", file=sys.stderr)
    result = outcouple.rays(args.case, rays=args.rays, seed=args.seed, lateral=args.lateral, na=args.na)
    _warn(args.case, result["warnings"])
    print(json.dumps(result, indent=2) if args.json else tables.format_rays(result))
    return 0


def cmd_multipass(args):
    result = outcouple.multipass(args.case, angles=args.angles, response=args.response, workers=args.workers,
                                 progress=not args.quiet, vary=args.vary or (), plot=args.plot)
    if args.json:
        _json(result)
    else:
        print(tables.format_multipass(result))
    return 0


def cmd_compare(args):
    result = outcouple.compare(args.case, args.vary, tolerance=args.tolerance, rays=args.rays, output=args.output,
                             workers=args.workers, progress=not args.quiet)
    if args.json:
        _json({k: v for k, v in result.items() if k != "case"})
    else:
        print(tables.format_compare(result))
    return 0


def cmd_sweep(args):
    cluster = {key: getattr(args, key) for key in ("partition", "time", "mem", "cpus", "jobs_per_task")}
    cluster["extra"] = args.sbatch or []
    info = outcouple.sweep(args.case, args.out, engine=args.engine, workers=args.workers, progress=not args.quiet,
                           cluster=cluster, wait=args.wait)
    out, total = Path(args.out), info["jobs"]
    if args.engine == "slurm":
        if info["slurm_job"] is None:
            print(f"{out}: nothing to submit (every job is done or queued)")
        else:
            print(f"{out}: submitted SLURM job array {info['slurm_job']} with {info['tasks']} task(s) "
                  f"({info['jobs_per_task']} job(s) per task; the sweep has {total} job(s))")
        if not args.wait:
            return 0
        counts = info["counts"]
        print(f"{out}: done {counts['done']}, running {counts['running']}, failed {counts['failed']}, "
              f"missing {counts['missing']}")
        return 0 if counts["done"] == total else 1
    print(f"{out}: {info['done']} of {total} job(s) done ({info['ran']} run now), {len(info['failed'])} failed")
    _print_lines(tables.failed_lines(info["failed"]))
    return 0 if not info["failed"] else 1


def _print_lines(lines):
    for line in lines:
        print(line)


def cmd_status(args):
    counts = outcouple.status(args.dir)
    print(f"{args.dir}: {counts['jobs']} job(s): done {counts['done']}, running {counts['running']}, "
          f"failed {counts['failed']}, missing {counts['missing']}")
    _print_lines(tables.failed_lines(counts["failed_jobs"]))
    return 0


def cmd_collect(args):
    summaries, _ = outcouple.collect(args.dir)
    print(f"{args.dir}: {len(summaries)} point(s) collected -> {Path(args.dir) / 'sweep.h5'}, "
          f"{Path(args.dir) / 'sweep.csv'}")
    return 0


def cmd_plot(args):
    print(outcouple.plot(args.dir, args.output))
    return 0


def cmd_report(args):
    print(outcouple.report(args.source, output=args.output, na=args.na))
    return 0


def cmd_converge(args):
    result = outcouple.converge(args.case, args.resolutions, args.tolerance, args.workers, not args.quiet)
    print(json.dumps(result, indent=2) if args.json else tables.format_converge(result))
    sys.stdout.flush()
    if not result["converged"]:
        print(f"WARNING: {args.case}: {tables.converge_judged(result)} is not converged to "
              f"{result['tolerance']:.2%}; raise grid.points_per_wavelength (or grid.resolution) and check again",
              file=sys.stderr)
    return 0


def _factors(factors):
    """(0.8, 1.0, 1.25) -> "0.8, 1 and 1.25" (help texts follow the constants, not a copy of them)."""
    words = [f"{f:g}" for f in factors]
    return ", ".join(words[:-1]) + " and " + words[-1]


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
    p.add_argument("--lateral", choices=("absorbing", "periodic"),
                   help="lateral boundaries: absorbing like the FDTD's, or periodic (default: periodic for a "
                        "periodic pattern over a mirror, metal or substrate back, else absorbing)")
    p.add_argument("--seed", type=int, default=0, help="seed of the random numbers (default 0)")
    p.add_argument("--json", action="store_true", help="print the summary as JSON")
    _add_na(p)
    p.add_argument("--quiet", action="store_true", help="no progress message")
    p.set_defaults(func=cmd_rays)
    p = sub.add_parser("multipass", help="a thick chip: the top's full-wave response inside a multi-pass model")
    p.add_argument("case", help="TOML case file")
    p.add_argument("--angles", type=_positive_int, default=90, help="angle bins across -90..90 degrees, equal in "
                   "sin(angle) (default 90)")
    p.add_argument("--response", choices=("fdtd", "exact"), help="the top's response: Meep (default for patterned "
                   "tops) or exact Fresnel (default for flat tops)")
    p.add_argument("--vary", action="append", metavar="KEY=START:STOP:COUNT[:log]",
                   help="chip.thickness or chip.alpha over a range, the same top (repeatable: a grid)")
    p.add_argument("--plot", metavar="FILE.png", help="write efficiency against thickness, 1 to 1000 µm")
    p.add_argument("--workers", type=_positive_int, help="Meep worker processes (default: number of cores)")
    p.add_argument("--json", action="store_true", help="print the result as JSON")
    p.add_argument("--quiet", action="store_true", help="no progress display")
    p.set_defaults(func=cmd_multipass)
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
    p.add_argument("--jobs-per-task", type=_positive_int,
                   help="slurm: sweep jobs per array task (default: one task per CPU of the partition when the "
                        "sweep has more jobs than CPUs, else 1)")
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
                   help=f"points per um (default: {_factors(DEFAULT_FACTORS)} times the case's; "
                        f"{_factors(FINER_FACTORS)} where the coarsest would fall below {MIN_PPW_ERROR} "
                        "points per wavelength)")
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
    parsed = build_parser().parse_args(args)
    try:
        return parsed.func(parsed)
    except (CaseError, ResultFileError) as exc:
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
