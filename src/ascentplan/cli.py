"""The ``ascentplan`` command line: one small handler per verb over the Python API."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import yaml

from ascentplan import __version__
from ascentplan.problem.loader import ProblemError, load_problem

#: exit status for a bad problem file or bad usage (argparse uses 2 for usage too)
EXIT_BAD_INPUT = 2


def _report(error: ProblemError, fallback_source: str) -> None:
    source = error.source or fallback_source
    for message in error.messages:
        print(f"{source}: {message}", file=sys.stderr)


def _cmd_check(args) -> int:
    from ascentplan.output.check_text import vehicle_summary

    status = 0
    for i, path in enumerate(args.files):
        try:
            problem = load_problem(path)
        except ProblemError as exc:
            _report(exc, path)
            status = EXIT_BAD_INPUT
            continue
        if i:
            print()
        print(vehicle_summary(problem), end="")
    return status


def run_simulate(problem, out=None, schedule=None) -> int:
    """Fly a problem, write ``trajectory.csv`` and ``summary.json``, print a summary.

    Parameters
    ----------
    problem : ascentplan.problem.Problem
    out : str or path-like or None
        Results folder; default ``results/<problem name>/``.
    schedule : str or path-like or None
        A schedule CSV (see :func:`ascentplan.output.files.read_schedule_csv`); without
        it ``problem.schedule`` or the default schedule is flown.

    Returns
    -------
    int
        0 when the flight ends normally, 1 on impact or failure, 2 on a bad schedule
        file.
    """
    # imported here so that ``check`` stays quick
    from ascentplan.cautions import CAUTION
    from ascentplan.output import files
    from ascentplan.replay.simulate import simulate

    flown = problem.schedule
    try:
        if schedule is not None:
            flown = files.read_schedule_csv(schedule)
        # a schedule that does not fit the phase plan is refused before any flight
        traj = simulate(problem, flown)
    except (OSError, ValueError) as exc:
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    folder = Path("results") / problem.name if out is None else out
    summary, csv_path, json_path = files.write_simulation(problem, traj, folder)
    print(files.format_summary(summary))
    print(f"wrote {csv_path}")
    print(f"wrote {json_path}")
    if traj.status != "ok":
        print(f"simulation {traj.status}: {traj.message}", file=sys.stderr)
    print(CAUTION)
    return 0 if traj.status == "ok" else 1


def _cmd_simulate(args) -> int:
    problem = load_problem(args.file)
    out = Path(args.out) if args.out is not None else Path("results") / problem.name
    schedule = Path(args.schedule) if args.schedule is not None else None
    status = run_simulate(problem, out=out, schedule=schedule)
    return 0 if status is None else int(status)


def _add_check(subparsers) -> None:
    p = subparsers.add_parser(
        "check", help="validate problem files and print the vehicle summary",
        description="Validate problem files; print each vehicle's masses, rocket-equation "
                    "velocity budget, burn times and liftoff thrust-to-weight. Exit status 2 "
                    "if any file has problems (all of them are listed on stderr).")
    p.add_argument("files", nargs="+", metavar="FILE", help="YAML problem file")
    p.set_defaults(handler=_cmd_check)


def _add_simulate(subparsers) -> None:
    p = subparsers.add_parser(
        "simulate", help="fly a given control schedule by forward integration",
        description="Forward-integrate the problem's vehicle under a control schedule "
                    "(from --schedule, else the file's schedule section, else the default).")
    p.add_argument("file", metavar="FILE", help="YAML problem file")
    p.add_argument("--out", metavar="DIR", default=None,
                   help="results folder (default: results/<problem name>/)")
    p.add_argument("--schedule", metavar="CSV", default=None,
                   help="CSV control schedule to fly instead of the file's schedule")
    p.set_defaults(handler=_cmd_simulate)


#: exit status of ``solve`` for each result status
SOLVE_EXIT = {"optimal": 0, "not_verified": 1, "infeasible": 3, "failed": 4}


def _cmd_solve(args) -> int:
    problem = load_problem(args.file)
    from ascentplan.pipeline import format_result, solve, write_outputs
    from ascentplan.staging.coupled import solve_with_split_comparison

    out = Path(args.out) if args.out is not None else Path("results") / problem.name
    if problem.mass_split is not None:
        points = args.split_map or problem.mass_split.map_points or None
        result = solve_with_split_comparison(problem, map_points=points, out_dir=out)
    else:
        result = solve(problem)
    write_outputs(result, out)
    print(format_result(result))
    print(f"results written to {out}/")
    return SOLVE_EXIT[result.status]


def _add_solve(subparsers) -> None:
    p = subparsers.add_parser(
        "solve", help="optimise the throttle and steering schedule (and stage masses)",
        description="Optimise the schedule by direct collocation, re-fly it by forward "
                    "integration and report it as verified only when both agree. Exit status "
                    "0 optimal and verified, 1 optimal on the mesh but not verified, "
                    "2 bad problem file, 3 infeasible, 4 solver failure.")
    p.add_argument("file", metavar="FILE", help="YAML problem file")
    p.add_argument("--out", metavar="DIR", default=None,
                   help="results folder (default: results/<problem name>/)")
    p.add_argument("--split-map", type=int, default=0, metavar="N",
                   help="with a stage-mass split held at its liftoff mass: also map the "
                        "objective over the split around the optimum, N points per axis "
                        "(warm-started re-solves; written to split_map.png); overrides "
                        "mass_split.map_points")
    p.set_defaults(handler=_cmd_solve)


def _cmd_split(args) -> int:
    problem = load_problem(args.file)
    from ascentplan.cautions import CAUTION
    from ascentplan.staging.rocket_equation import StagingError, format_split, split_for_vehicle

    hold = args.hold or (problem.mass_split.hold if problem.mass_split else "liftoff_mass")
    try:
        split = split_for_vehicle(problem.vehicle, delta_v=args.delta_v, hold=hold)
    except StagingError as exc:
        print(f"{args.file}: {exc}", file=sys.stderr)
        return 3
    except ValueError as exc:  # a bad combination of options
        print(f"{args.file}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    print(f"Rocket-equation stage split of {problem.name} ({hold.replace('_', ' ')} held; "
          "no gravity, drag or limits)")
    print(format_split(split))
    print(CAUTION)
    return 0


def _add_split(subparsers) -> None:
    p = subparsers.add_parser(
        "split", help="optimal stage mass split by the rocket equation (no trajectory)",
        description="The Lagrange-multiplier optimum split of the stage masses for the "
                    "vehicle in FILE: with the liftoff mass held (maximum ideal velocity) or "
                    "the payload held (minimum liftoff mass for --delta-v). Exit status 3 if "
                    "no split can reach the velocity.")
    p.add_argument("file", metavar="FILE", help="YAML problem file")
    p.add_argument("--hold", choices=("liftoff_mass", "payload"), default=None,
                   help="what stays fixed (default: the file's mass_split.hold, else "
                        "liftoff_mass)")
    p.add_argument("--delta-v", type=float, default=None, metavar="M_S",
                   help="required ideal velocity increment [m/s] with --hold payload "
                        "(default: the vehicle's own as written)")
    p.set_defaults(handler=_cmd_split)


def _cmd_report(args) -> int:
    from ascentplan.output.report import render_report_from_folder

    try:
        path = render_report_from_folder(Path(args.folder))
    except (FileNotFoundError, ValueError) as exc:
        print(f"{args.folder}: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    print(f"report written to {path}")
    return 0


def _add_report(subparsers) -> None:
    p = subparsers.add_parser(
        "report", help="render report.html from an existing results folder",
        description="Render a self-contained HTML report from the summary.json and plots in "
                    "a results folder written by 'solve'.")
    p.add_argument("folder", metavar="DIR", help="results folder")
    p.set_defaults(handler=_cmd_report)


def _cmd_sweep(args) -> int:
    load_problem(args.file)  # report a bad file before any worker starts
    from ascentplan.study.command import sweep_command

    return sweep_command(args.file, limit=args.limit, values=args.values,
                         dispersion=args.dispersion, samples=args.samples, seed=args.seed,
                         workers=args.workers, scheduler=args.scheduler, out=args.out,
                         retry_failed=args.retry_failed, progress=not args.quiet)


def _add_sweep(subparsers) -> None:
    p = subparsers.add_parser(
        "sweep", help="trade study: a sweep of one limit, or a dispersion of vehicle data",
        description="Solve many variants of a problem on local worker processes, or on a "
                    "Dask scheduler given by --scheduler. Rows are written to study.csv and "
                    "study.jsonl as each point finishes; Ctrl-C or SIGTERM stops the workers "
                    "and keeps every finished row, and running the same command again "
                    "resumes. Every point's values are checked by the problem loader before "
                    "any worker starts. Exit status 0 when every point finished (whatever "
                    "its status), 1 when any point raised or was lost with its worker, 2 bad "
                    "input (nothing run), 130 stopped by SIGINT, 143 stopped by SIGTERM.")
    p.add_argument("file", metavar="FILE", help="YAML problem file")
    what = p.add_mutually_exclusive_group(required=True)
    what.add_argument("--limit", metavar="NAME",
                      help="limit to sweep, e.g. max_dynamic_pressure (with --values)")
    what.add_argument("--dispersion", nargs="+", metavar="KEY=KIND:SPREAD",
                      help="dispersed inputs, e.g. vehicle.stages[0].thrust_vacuum=normal:0.02 "
                           "(relative sigma or half-width; with --samples)")
    p.add_argument("--values", nargs="+", metavar="V",
                   help="bound values with units, e.g. '20 kPa' '25 kPa' '30 kPa'")
    p.add_argument("--samples", type=int, default=None, help="dispersion samples")
    p.add_argument("--seed", type=int, default=0, help="dispersion random seed (default 0)")
    where = p.add_mutually_exclusive_group()
    where.add_argument("--workers", type=int, default=None,
                       help="local worker processes (default: one per core)")
    where.add_argument("--scheduler", metavar="ADDRESS", default=None,
                       help="Dask scheduler address, e.g. tcp://10.0.0.5:8786 "
                            "(needs the 'cluster' extra)")
    p.add_argument("--out", metavar="DIR", default=None, help="study folder")
    p.add_argument("--retry-failed", action="store_true",
                   help="on resume, solve again the points that raised")
    p.add_argument("--quiet", action="store_true", help="no progress lines")
    p.set_defaults(handler=_cmd_sweep)


#: each verb adds its own parser; a new verb is one more function here
_VERBS = (_add_check, _add_simulate, _add_solve, _add_split, _add_report, _add_sweep)


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every verb registered."""
    parser = argparse.ArgumentParser(
        prog="ascentplan",
        description="Throttle, steering and stage-mass-split optimisation of rocket ascents "
                    "(conceptual design; results are not flight-qualified).")
    parser.add_argument("--version", action="version", version=f"ascentplan {__version__}")
    subparsers = parser.add_subparsers(dest="verb", metavar="VERB")
    for add in _VERBS:
        add(subparsers)
    return parser


def main(argv=None) -> int:
    """Run the command line.

    Parameters
    ----------
    argv : list of str, optional
        Arguments after the program name; default ``sys.argv[1:]``.

    Returns
    -------
    int
        Exit status: 0 success, 2 bad problem file or usage, other values from the verb.
    """
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:
        # argparse exits on --help, --version and usage errors; return the status instead
        if exc.code is None:
            return 0
        return exc.code if isinstance(exc.code, int) else EXIT_BAD_INPUT
    if getattr(args, "handler", None) is None:
        parser.print_usage(sys.stderr)
        print("ascentplan: choose a verb, e.g. 'ascentplan check problem.yaml'",
              file=sys.stderr)
        return EXIT_BAD_INPUT
    try:
        return args.handler(args)
    except ProblemError as exc:
        _report(exc, getattr(args, "file", "ascentplan"))
        return EXIT_BAD_INPUT
    except yaml.YAMLError as exc:
        print(f"{getattr(args, 'file', 'ascentplan')}: not valid YAML: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except OSError as exc:
        name = exc.filename or getattr(args, "file", "ascentplan")
        print(f"{name}: {exc.strerror or exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
