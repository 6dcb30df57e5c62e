"""The ``ascentplan`` command line: one small handler per verb over the Python API.

Whatever happens, a verb ends with an exit status and, when it failed, one line on
stderr per problem, never a traceback (common practice for command-line tools):

* 0 success; 1, 3 and 4 the verbs' own outcomes (a flight that impacts, an infeasible
  or failed solve, a flight beyond its limits);
* 2 bad input: a problem file, schedule file, argument or unusable results folder;
* 70 an internal error (``EX_SOFTWARE`` of BSD ``sysexits.h``): a fault of the tool,
  shown as one line; ``--debug`` or ``ASCENTPLAN_DEBUG=1`` shows its traceback;
* 130 interrupted (Ctrl-C; 128 + SIGINT as a shell reports it);
* 141 standard output closed early, e.g. ``| head -1`` (128 + SIGPIPE, what a shell
  reports for a tool that SIGPIPE ends).

Text taken from the input (file names, names in a problem file, values) is echoed with
its control characters escaped (:func:`ascentplan.output.text.printable`).
"""

from __future__ import annotations

import argparse
import os
import sys
import traceback
from pathlib import Path

import yaml

from ascentplan import __version__
from ascentplan.output.text import printable, printable_lines
from ascentplan.problem.loader import ProblemError, load_problem

#: exit status for a bad problem file or bad usage (argparse uses 2 for usage too)
EXIT_BAD_INPUT = 2
#: exit status of ``simulate`` for a flight beyond a limit of the problem file
EXIT_LIMITS_EXCEEDED = 3
#: exit status for a fault of the tool itself (``EX_SOFTWARE``, BSD sysexits.h)
EXIT_INTERNAL = 70
#: exit status after Ctrl-C (128 + SIGINT)
EXIT_INTERRUPTED = 130
#: exit status when standard output is closed before the end (128 + SIGPIPE)
EXIT_BROKEN_PIPE = 141
#: every exit status any verb may return (143: a trade study stopped by SIGTERM)
EXIT_STATUSES = frozenset({0, 1, EXIT_BAD_INPUT, 3, 4, EXIT_INTERNAL, EXIT_INTERRUPTED,
                           EXIT_BROKEN_PIPE, 143})
#: environment variable that, set to anything but "" or "0", shows internal tracebacks
DEBUG_VARIABLE = "ASCENTPLAN_DEBUG"
#: longest error text shown on the one line of an internal error [characters]
_MESSAGE_CHARS = 400
#: longest file name most file systems accept [bytes]
_NAME_MAX = 255


class InputError(Exception):
    """Input that the command line itself refuses, e.g. a results folder that cannot be
    created; the message says what and why."""


def _say(message) -> None:
    """One message on stderr, control characters escaped; a closed stderr is ignored."""
    try:
        print(printable(message), file=sys.stderr)
    except (OSError, ValueError):
        pass


def _show(text: str, end: str = "\n") -> None:
    """Text on stdout, control characters escaped line by line."""
    print(printable_lines(text), end=end)


def _report(error: ProblemError, fallback_source: str) -> None:
    source = error.source or fallback_source
    for message in error.messages:
        _say(f"{source}: {message}")


def _path_argument(text: str) -> str:
    """A path on the command line: any text an operating system can pass as a path."""
    if "\x00" in text:
        raise argparse.ArgumentTypeError(f"not a usable path (a NUL character): {text!r}")
    try:
        os.fsencode(text)
    except UnicodeError:
        raise argparse.ArgumentTypeError(f"not a usable path (cannot be encoded for the "
                                         f"file system): {text!r}") from None
    return text


def _results_folder(problem, out) -> Path:
    """``--out`` as given, else ``results/<problem name>``, refused when the name cannot
    be one folder's name (so that a name never writes outside ``results/``)."""
    if out is not None:
        return Path(out)
    name = problem.name
    reason = None
    if name.strip() in ("", ".", ".."):
        reason = "not a folder name"
    elif any(sep in name for sep in ("/", "\\", os.sep)):
        reason = "a path separator in it"
    elif not name.isprintable():
        reason = "a control character in it"
    elif len(name.encode("utf-8", "surrogateescape")) > _NAME_MAX:
        reason = f"longer than the {_NAME_MAX} bytes of a file name"
    if reason is not None:
        raise InputError(f"name {name!r} cannot be the results folder's name ({reason}); "
                         f"give --out DIR")
    return Path("results") / name


def _make_folder(folder: Path) -> None:
    """Create the results folder before any work, so that a refusal costs nothing."""
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except (OSError, ValueError) as exc:
        reason = getattr(exc, "strerror", None) or str(exc)
        raise InputError(f"results folder {str(folder)!r} cannot be created ({reason})") \
            from None
    if not os.access(folder, os.W_OK | os.X_OK):
        raise InputError(f"results folder {str(folder)!r} is not writable")


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
        _show(vehicle_summary(problem), end="")
    return status


#: exit status of ``simulate`` for each status of its summary
SIMULATE_EXIT = {"ok": 0, "impact": 1, "failed": 1, "limits_exceeded": EXIT_LIMITS_EXCEEDED}


def run_simulate(problem, out=None, schedule=None) -> int:
    """Fly a problem, write ``trajectory.csv`` and ``summary.json``, print a summary.

    The schedule is checked before the flight: it must fit the phase plan, keep each
    stage's throttle range, fly coasts at throttle 0 and pitch within [-90, 90] deg
    (:func:`ascentplan.replay.schedule.check_control_ranges`). After the flight every
    limit of the problem file is compared with its peak as verification compares it
    (:func:`ascentplan.output.files.limit_rows`).

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
        0 when the flight ends normally within its limits, 1 on impact or failure,
        2 on a bad schedule or a results folder that cannot be created, 3 when a limit
        is exceeded beyond the verification tolerance.
    """
    # imported here so that ``check`` stays quick
    from ascentplan.cautions import CAUTION
    from ascentplan.output import files
    from ascentplan.problem.model import TimeSchedule
    from ascentplan.replay.schedule import ScheduleError, check_flown_throttle
    from ascentplan.replay.simulate import simulate

    folder = Path("results") / problem.name if out is None else Path(out)
    try:
        flown = _schedule_to_fly(problem, schedule)
        _make_folder(folder)
        traj = simulate(problem, flown)
        if isinstance(flown, TimeSchedule):
            check_flown_throttle(problem, flown, traj.phase_bounds, traj.phase_kinds,
                                 traj.phase_stages)
    except (ScheduleError, InputError) as exc:
        _say(f"error: {exc}")
        return EXIT_BAD_INPUT
    summary, csv_path, json_path = files.write_simulation(problem, traj, folder)
    _show(files.format_summary(summary))
    _show(f"wrote {csv_path}")
    _show(f"wrote {json_path}")
    if summary["status"] != "ok":
        _say(f"simulation {summary['status']}: {summary['message']}")
    _show(CAUTION)
    return SIMULATE_EXIT.get(summary["status"], 1)


def _schedule_to_fly(problem, schedule_file):
    """The schedule ``simulate`` flies, checked against the problem; raises ScheduleError."""
    from ascentplan.output.files import read_schedule_csv
    from ascentplan.problem.model import phase_plan
    from ascentplan.replay.schedule import ScheduleError, check_control_ranges, check_schedule

    flown = problem.schedule
    if schedule_file is not None:
        flown = read_schedule_csv(schedule_file)
    plan = list(phase_plan(problem))
    try:
        check_schedule(problem, plan, flown)
        check_control_ranges(problem, plan, flown)
    except ScheduleError as exc:
        where = f"{schedule_file}: " if schedule_file is not None else ""
        raise ScheduleError(f"{where}{exc}") from None
    return flown


def _cmd_simulate(args) -> int:
    problem = load_problem(args.file)
    out = _results_folder(problem, args.out)
    schedule = Path(args.schedule) if args.schedule is not None else None
    status = run_simulate(problem, out=out, schedule=schedule)
    return 0 if status is None else int(status)


def _add_check(subparsers) -> None:
    p = subparsers.add_parser(
        "check", help="validate problem files and print the vehicle summary",
        description="Validate problem files; print each vehicle's masses, rocket-equation "
                    "velocity budget, burn times and liftoff thrust-to-weight. Exit status 2 "
                    "if any file has problems (all of them are listed on stderr).")
    p.add_argument("files", nargs="+", metavar="FILE", type=_path_argument,
                   help="YAML problem file")
    p.set_defaults(handler=_cmd_check)


def _add_simulate(subparsers) -> None:
    p = subparsers.add_parser(
        "simulate", help="fly a given control schedule by forward integration",
        description="Forward-integrate the problem's vehicle under a control schedule "
                    "(from --schedule, else the file's schedule section, else the default) "
                    "and compare every limit of the file with its peak. Exit status 0 ok, "
                    "1 impact or failure, 2 bad input, 3 a limit exceeded.")
    p.add_argument("file", metavar="FILE", type=_path_argument, help="YAML problem file")
    p.add_argument("--out", metavar="DIR", default=None, type=_path_argument,
                   help="results folder (default: results/<problem name>/)")
    p.add_argument("--schedule", metavar="CSV", default=None, type=_path_argument,
                   help="CSV control schedule to fly instead of the file's schedule")
    p.set_defaults(handler=_cmd_simulate)


#: exit status of ``solve`` for each result status
SOLVE_EXIT = {"optimal": 0, "not_verified": 1, "infeasible": 3, "failed": 4}


def _cmd_solve(args) -> int:
    problem = load_problem(args.file)
    from ascentplan.output.plot_workers import PlotWorkers
    from ascentplan.pipeline import format_result, solve_problem, write_outputs

    out = _results_folder(problem, args.out)
    _make_folder(out)
    # a drawing process starts now (if a processor is idle): ready when the solve ends
    with PlotWorkers(problem) as plotter:
        result = solve_problem(problem, split_map=args.split_map, out_dir=out)
        write_outputs(result, out, plotter=plotter)
    _show(format_result(result))
    _show(f"results written to {out}/")
    return SOLVE_EXIT[result.status]


def _add_solve(subparsers) -> None:
    p = subparsers.add_parser(
        "solve", help="optimise the throttle and steering schedule (and stage masses)",
        description="Optimise the schedule by direct collocation, re-fly it by forward "
                    "integration and report it as verified only when both agree. Exit status "
                    "0 optimal and verified, 1 optimal on the mesh but not verified, "
                    "2 bad problem file, 3 infeasible, 4 solver failure.")
    p.add_argument("file", metavar="FILE", type=_path_argument, help="YAML problem file")
    p.add_argument("--out", metavar="DIR", default=None, type=_path_argument,
                   help="results folder (default: results/<problem name>/)")
    p.add_argument("--split-map", type=int, default=None, metavar="N",
                   help="with a stage-mass split held at its liftoff mass: also map the "
                        "objective over the split around the optimum, N points per axis "
                        "(warm-started re-solves; written to split_map.png); overrides "
                        "mass_split.map_points, 0 for no map")
    p.set_defaults(handler=_cmd_solve)


def _speed_argument(text: str) -> float:
    """A speed on the command line, with its unit ("9.2 km/s"; a bare number is m/s)."""
    from ascentplan.output.split_record import speed_from_text

    try:
        return speed_from_text(text, "--delta-v")
    except ValueError as exc:
        # argparse names the option itself
        raise argparse.ArgumentTypeError(str(exc).removeprefix("--delta-v: ")) from None


def _cmd_split(args) -> int:
    problem = load_problem(args.file)
    from ascentplan.cautions import CAUTION
    from ascentplan.output.atomic import write_text
    from ascentplan.output.split_record import split_json, split_record
    from ascentplan.staging.rocket_equation import StagingError, format_split, split_for_vehicle

    payload = problem.vehicle.payload_mass
    if not payload > 0.0:
        # the rocket equation sizes each stage by the mass above it: without a payload
        # the optimum is no vehicle at all
        _say(f"{args.file}: vehicle.payload_mass: must be > 0 kg for a stage split (each "
             f"stage is sized by the mass above it), got {payload:g} kg")
        return EXIT_BAD_INPUT
    delta_v = args.delta_v
    hold = args.hold or (problem.mass_split.hold if problem.mass_split else "liftoff_mass")
    try:
        split = split_for_vehicle(problem.vehicle, delta_v=delta_v, hold=hold)
    except StagingError as exc:
        _say(f"{args.file}: {exc}")
        return 3
    except ValueError as exc:  # a bad combination of options
        _say(f"{args.file}: {exc}")
        return EXIT_BAD_INPUT
    text = split_json(split_record(problem, split, hold, delta_v))
    if args.json is not None:
        write_text(args.json, text)
    if args.format == "json":
        print(text, end="")  # JSON escapes control characters itself
        return 0
    _show(f"Rocket-equation stage split of {problem.name} ({hold.replace('_', ' ')} held; "
          "no gravity, drag or limits)")
    _show(format_split(split))
    if args.json is not None:
        _show(f"wrote {args.json}")
    _show(CAUTION)
    return 0


def _add_split(subparsers) -> None:
    p = subparsers.add_parser(
        "split", help="optimal stage mass split by the rocket equation (no trajectory)",
        description="The Lagrange-multiplier optimum stage split of the vehicle in FILE: "
                    "liftoff mass held (maximum ideal velocity increment) or payload held "
                    "(minimum liftoff mass for --delta-v); as text, or as JSON on stdout "
                    "(--format json) or in a file (--json FILE). Exit status 0, 2 bad "
                    "input (a payload of 0 kg too), 3 if no split reaches the velocity.")
    p.add_argument("file", metavar="FILE", type=_path_argument, help="YAML problem file")
    p.add_argument("--hold", choices=("liftoff_mass", "payload"), default=None,
                   help="what stays fixed (default: the file's mass_split.hold, else "
                        "liftoff_mass)")
    p.add_argument("--delta-v", default=None, metavar="SPEED", type=_speed_argument,
                   help="required ideal velocity increment with --hold payload, with its "
                        "unit ('9.2 km/s'; a bare number is m/s; default: the vehicle's "
                        "own as written)")
    p.add_argument("--format", choices=("text", "json"), default="text",
                   help="text (default) or json on standard output")
    p.add_argument("--json", metavar="FILE", default=None, type=_path_argument,
                   help="also write the split as JSON to FILE")
    p.set_defaults(handler=_cmd_split)


def _cmd_report(args) -> int:
    from ascentplan.output.report import render_report_from_folder

    try:
        path = render_report_from_folder(Path(args.folder))
    except (FileNotFoundError, ValueError) as exc:
        _say(f"{args.folder}: {exc}")
        return EXIT_BAD_INPUT
    _show(f"report written to {path}")
    return 0


def _add_report(subparsers) -> None:
    p = subparsers.add_parser(
        "report", help="render report.html from an existing results folder",
        description="Render a self-contained HTML report from the summary.json and plots in "
                    "a results folder written by 'solve' or 'simulate', from those files "
                    "alone (the summary restates the problem's inputs). Exit status 0, or 2 "
                    "when the folder has no usable summary.json.")
    p.add_argument("folder", metavar="DIR", type=_path_argument, help="results folder")
    p.set_defaults(handler=_cmd_report)


def _cmd_sweep(args) -> int:
    load_problem(args.file)  # report a bad file before any worker starts
    from ascentplan.output.study_report import write_study_outputs
    from ascentplan.study.command import sweep_command

    given = {k: getattr(args, k) for k in ("limit", "values", "vary", "dispersion", "samples",
                                            "seed", "confidence", "workers", "scheduler",
                                            "out", "retry_failed")}
    return sweep_command(args.file, **given, progress=not args.quiet, report=write_study_outputs)


def _add_sweep(subparsers) -> None:
    p = subparsers.add_parser(
        "sweep", help="trade study: inputs over values (a grid of two), or a dispersion",
        description="Solve variants of a problem on local worker processes or a Dask "
                    "scheduler. Rows go to study.csv and study.jsonl as points finish; a "
                    "stop keeps them and the same command resumes. Values are checked by "
                    "the problem loader before any worker starts. At the end: "
                    "performance.png (one input), performance_map.png (two) or "
                    "dispersion.png, and study_report.html. Exit status 0 all finished, 1 a "
                    "point raised or was lost, 2 bad input, 130 SIGINT, 143 SIGTERM.")
    p.add_argument("file", metavar="FILE", help="YAML problem file")
    what = p.add_mutually_exclusive_group(required=True)
    what.add_argument("--vary", action="append", metavar="KEY=VALUES",
                      help="an input and its values with units, V1,V2,... or "
                           "START:STOP:COUNT, e.g. target.altitude=200km:800km:7; twice "
                           "for a grid")
    what.add_argument("--limit", metavar="NAME", help="limit to sweep, with --values")
    what.add_argument("--dispersion", nargs="+", metavar="KEY=KIND:SPREAD",
                      help="dispersed inputs, e.g. vehicle.stages[0].thrust_vacuum=normal:0.02 "
                           "(relative sigma or half-width; with --samples)")
    p.add_argument("--values", nargs="+", metavar="V", help="bound values, e.g. '20 kPa'")
    p.add_argument("--samples", type=int, default=None, help="dispersion samples")
    p.add_argument("--seed", type=int, default=0, help="dispersion random seed (default 0)")
    p.add_argument("--confidence", type=float, default=0.95,
                   help="fraction of dispersed cases the reserve covers (default 0.95)")
    where = p.add_mutually_exclusive_group()
    where.add_argument("--workers", type=int, default=None,
                       help="local worker processes (default: one per core)")
    where.add_argument("--scheduler", metavar="ADDRESS", default=None,
                       help="Dask scheduler address, e.g. tcp://10.0.0.5:8786")
    p.add_argument("--out", metavar="DIR", default=None, help="study folder")
    p.add_argument("--retry-failed", action="store_true",
                   help="on resume, solve again the points that raised")
    p.add_argument("--quiet", action="store_true", help="no progress lines")
    p.set_defaults(handler=_cmd_sweep)


def _cmd_schema(args) -> int:
    from ascentplan.problem.schema import schema_text

    text = schema_text()
    if args.out is None:
        _show(text, end="")
        return 0
    from ascentplan.output.atomic import write_text

    try:
        write_text(Path(args.out), text)
    except OSError as exc:
        _say(f"--out {args.out}: cannot write the schema: {exc.strerror or exc}")
        return EXIT_BAD_INPUT
    _show(f"schema written to {args.out}")
    return 0


def _add_schema(subparsers) -> None:
    p = subparsers.add_parser(
        "schema", help="print the JSON Schema of the problem file",
        description="Print the JSON Schema (draft 2020-12) of a problem file, generated from "
                    "the loader's own rules and the model, limit and objective registries, "
                    "for an editor's completion and checking (keys, names, units). Rules "
                    "across keys, unit dimensions and value ranges are checked by "
                    "'ascentplan check'. Exit status 0, or 2 when --out cannot be written.")
    p.add_argument("--out", metavar="FILE", default=None, type=_path_argument,
                   help="write the schema to FILE instead of standard output")
    p.set_defaults(handler=_cmd_schema)


#: each verb adds its own parser; a new verb is one more function here
_VERBS = (_add_check, _add_simulate, _add_solve, _add_split, _add_report, _add_sweep,
          _add_schema)


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors echo the arguments with control characters
    escaped (argparse quotes some values with repr, not all: unrecognised arguments are
    joined as typed)."""

    def error(self, message):
        self.print_usage(sys.stderr)
        self.exit(EXIT_BAD_INPUT, f"{self.prog}: error: {printable(message)}\n")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every verb registered."""
    parser = _Parser(
        prog="ascentplan",
        description="Throttle, steering and stage-mass-split optimisation of rocket ascents "
                    "(conceptual design; results are not flight-qualified).",
        epilog="Exit status: 0 success, 1 impact, failure or not verified, 2 bad input, "
               "3 infeasible or a limit exceeded, 4 solver failure, 70 internal error, "
               "130 interrupted, 141 output closed early.")
    parser.add_argument("--version", action="version", version=f"ascentplan {__version__}")
    parser.add_argument("--debug", action="store_true",
                        help=f"show the traceback of an internal error (or set "
                             f"{DEBUG_VARIABLE}=1)")
    subparsers = parser.add_subparsers(dest="verb", metavar="VERB")
    for add in _VERBS:
        add(subparsers)
    for verb in subparsers.choices.values():
        # also after the verb, where it is usually typed when a run is repeated
        verb.add_argument("--debug", dest="verb_debug", action="store_true",
                          help="show the traceback of an internal error")
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
        Exit status, one of :data:`EXIT_STATUSES`: 0 success, 2 bad input, 70 internal
        error, 130 interrupted, 141 standard output closed early, other values from the
        verb. No exception escapes but ``SystemExit`` raised by a verb.
    """
    try:
        status = _run(argv)
        # what is still buffered meets a closed pipe here at the latest
        sys.stdout.flush()
    except BrokenPipeError:
        _quiet_stdout()
        return EXIT_BROKEN_PIPE
    except KeyboardInterrupt:
        _say("ascentplan: interrupted")
        return EXIT_INTERRUPTED
    return status


def _quiet_stdout() -> None:
    """Point stdout at the null device, so that the interpreter's final flush of what
    is still buffered cannot fail again (the recipe of the Python documentation,
    "Note on SIGPIPE" in the signal module)."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        # stdout is not a file descriptor (captured in a test): nothing to redirect
        pass


def _run(argv) -> int:
    """Parse the arguments and run the verb; every error of the library ends here."""
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
        _say("ascentplan: choose a verb, e.g. 'ascentplan check problem.yaml'")
        return EXIT_BAD_INPUT
    debug = args.debug or getattr(args, "verb_debug", False) or _debug_from_environment()
    try:
        status = args.handler(args)
        return 0 if status is None else int(status)
    except BrokenPipeError:
        raise
    except Exception as exc:  # noqa: BLE001 - the one place that turns errors into statuses
        return _failure(exc, args, debug)


def _debug_from_environment() -> bool:
    return os.environ.get(DEBUG_VARIABLE, "").strip() not in ("", "0")


def _failure(exc: Exception, args, debug: bool) -> int:
    """One line on stderr for an error a verb raised, and its exit status."""
    source = getattr(args, "file", None) or getattr(args, "folder", None) or "ascentplan"
    if isinstance(exc, ProblemError):
        _report(exc, source)
        return EXIT_BAD_INPUT
    if isinstance(exc, InputError):
        _say(f"{source}: {exc}")
        return EXIT_BAD_INPUT
    if isinstance(exc, yaml.YAMLError):
        _say(f"{source}: not valid YAML: {exc}")
        return EXIT_BAD_INPUT
    if isinstance(exc, OSError):
        # a file that cannot be read, a folder that cannot be written: the input's fault
        _say(f"{exc.filename or source}: {exc.strerror or exc}")
        return EXIT_BAD_INPUT
    if debug:
        try:
            traceback.print_exception(exc, file=sys.stderr)
        except (OSError, ValueError):
            pass
        hint = ""
    else:
        hint = f" (rerun with --debug, or {DEBUG_VARIABLE}=1, for the traceback)"
    text = str(exc)
    if len(text) > _MESSAGE_CHARS:
        text = text[:_MESSAGE_CHARS] + "..."
    _say(f"ascentplan: internal error: {type(exc).__name__}: {text}{hint}")
    return EXIT_INTERNAL
