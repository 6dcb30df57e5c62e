"""The ``sweep`` command: arguments in, a study run, its summary printed (with a
dispersion's reserve, also recorded in study.json), the study's plots and report written
through the function it is given. The only part of the trade-study code that prints."""

from __future__ import annotations

import re
import sys
from pathlib import Path

from ascentplan.study import spec
from ascentplan.study.errors import StudyError, StudyIncomplete, StudyInterrupted
from ascentplan.study.files import STUDY_CSV, STUDY_JSONL, StudyFiles, key_units
from ascentplan.study.runner import run_study
from ascentplan.study.stopping import stop_on_signals
from ascentplan.study.summary import DEFAULT_CONFIDENCE, dispersion_reserve, summarise_study

__all__ = ["sweep_command"]

_SPREAD = re.compile(r"^\s*([^=\s]+)\s*=\s*(\w+)\s*:\s*([-+0-9.eE]+)\s*(%?)\s*$")


def _parse_dispersion(given) -> dict:
    """{key: (kind, spread)} from a dict or from strings 'KEY=KIND:SPREAD' ('2%' or 0.02)."""
    if isinstance(given, dict):
        return given
    if isinstance(given, str):
        given = [given]
    out = {}
    for i, item in enumerate(given or []):
        match = _SPREAD.match(str(item))
        if match is None:
            raise StudyError(f"dispersion[{i}]: expected KEY=KIND:SPREAD such as "
                             f"'vehicle.stages[0].thrust_vacuum=normal:2%', got {item!r}")
        key, kind, number, percent = match.groups()
        try:
            size = float(number) / (100.0 if percent else 1.0)
        except ValueError:
            raise StudyError(f"dispersion[{i}]: cannot read the spread {number!r} in "
                             f"{item!r}") from None
        out[key] = (kind, size)
    if not out:
        raise StudyError("dispersion: expected at least one KEY=KIND:SPREAD")
    return out


def _parse_vary(given) -> dict:
    """{key: values text} from a dict or from strings 'KEY=VALUES'."""
    if isinstance(given, dict):
        return given
    if isinstance(given, str):
        given = [given]
    out: dict = {}
    for i, item in enumerate(given or []):
        key, sep, values = str(item).partition("=")
        if not sep or not key.strip() or not values.strip():
            raise StudyError(f"vary[{i}]: expected KEY=VALUES such as "
                             f"'target.altitude=200km:800km:7' or "
                             f"'limits.max_dynamic_pressure=20 kPa,30 kPa', got {item!r}")
        if key.strip() in out:
            raise StudyError(f"vary[{i}]: {key.strip()} is varied twice")
        out[key.strip()] = values.strip()
    if not 1 <= len(out) <= spec.MAX_VARIED_KEYS:
        raise StudyError(f"vary: expected one or two KEY=VALUES (two make a grid), got "
                         f"{len(out)}")
    return out


def _slug(key: str) -> str:
    """A key path as part of a folder name: 'vehicle.stages[1].isp_vacuum' ->
    'vehicle.stages-1.isp_vacuum'."""
    return re.sub(r"[^A-Za-z0-9_.]+", "-", key).strip("-.")


def _study(problem_path, limit, values, dispersion, samples, seed, vary=None) -> tuple:
    """The study the arguments describe, and its default folder name."""
    from ascentplan.problem.loader import load_problem

    given = [x is not None for x in (limit, dispersion, vary)]
    if sum(given) != 1:
        raise StudyError("give one of: a limit with values to sweep, inputs to vary "
                         "(KEY=VALUES), or a dispersion with a number of samples")
    if dispersion is None and samples is not None:
        raise StudyError("samples: applies to a dispersion, not to a sweep or a vary study")
    if limit is None and values is not None:
        raise StudyError("values: applies to a limit sweep (with a limit)")
    name = load_problem(problem_path).name
    if limit is not None:
        study = spec.limit_sweep(problem_path, limit, values)
        return study, f"{name}-sweep-{limit}"
    if vary is not None:
        inputs = _parse_vary(vary)
        study = spec.vary(problem_path, inputs)
        return study, f"{name}-vary-" + "-x-".join(_slug(k) for k in inputs)
    if samples is None:
        raise StudyError("samples: a dispersion needs a number of samples")
    study = spec.dispersion(problem_path, _parse_dispersion(dispersion), samples, seed)
    return study, f"{name}-dispersion-seed{seed}"


def _print_error(exc: Exception) -> None:
    # a refused changed problem carries the loader's messages, one per line
    for line in str(exc).split("\n"):
        print(f"ascentplan sweep: {line}", file=sys.stderr)


def _check_confidence(confidence) -> float:
    if (isinstance(confidence, bool) or not isinstance(confidence, (int, float))
            or not 0.0 < confidence < 1.0):
        raise StudyError(f"confidence: expected the fraction of dispersed cases a reserve "
                         f"covers, between 0 and 1 (0.95 for 95 %), got {confidence!r}")
    return float(confidence)


def sweep_command(problem_path, *, limit: str | None = None, values=None, dispersion=None,
                  samples: int | None = None, seed: int = 0, vary=None,
                  confidence: float = DEFAULT_CONFIDENCE, workers: int | None = None,
                  scheduler=None, out=None, retry_failed: bool = False,
                  progress: bool = True, report=None) -> int:
    """Run a limit sweep, a study of one or two inputs, or a dispersion from the command
    line; print the summary.

    Parameters
    ----------
    problem_path : str
    limit : str, optional
        The limit to sweep, with ``values`` (strings with units, e.g. ``"25 kPa"``, or
        plain numbers in the limit's ``si_unit``: Pa, g0, Pa rad, m): a shorthand of
        ``vary={"limits.<limit>": values}``.
    vary : dict or list of str, optional
        One or two inputs and their values: ``{key: values}`` or strings
        ``"KEY=VALUES"``, VALUES a list ``V1,V2,...`` or a range ``START:STOP:COUNT``
        (``target.altitude=200km:800km:7``); two make a grid (see
        :func:`ascentplan.study.spec.vary`).
    dispersion : dict or list of str, optional
        ``{key: (kind, spread)}`` or strings ``"KEY=KIND:SPREAD"``
        (``vehicle.stages[0].thrust_vacuum=normal:2%``), with ``samples`` and ``seed``.
    confidence : float
        Fraction of a dispersion's cases its reserve covers (default 0.95).
    workers, scheduler, retry_failed, progress
        As for :func:`~ascentplan.study.runner.run_study`.
    out : str, optional
        Study folder; default ``results/<problem name>-sweep-<limit>``,
        ``results/<problem name>-vary-<keys>`` or
        ``results/<problem name>-dispersion-seed<seed>``.
    report : callable, optional
        Called with the study folder once the rows are in (also on a resume that finds
        them all); returns the paths it wrote (the command line passes
        :func:`ascentplan.output.study_report.write_study_outputs`: the performance
        plot and ``study_report.html``).

    Returns
    -------
    int
        0 when every point finished (whatever its status), 1 when any point raised an
        error or was not run (its worker was lost), 2 for bad input (nothing is run and
        nothing written), 128 + the signal number when SIGINT (130) or SIGTERM (143)
        stopped the study (common practice of POSIX shells for a process ended by a
        signal); the stop is told in one line with the resume hint.
    """
    with stop_on_signals():
        try:
            return _sweep(problem_path, dict(limit=limit, values=values, dispersion=dispersion,
                                             samples=samples, seed=seed, vary=vary),
                          confidence, dict(workers=workers, scheduler=scheduler,
                                           progress=progress, retry_failed=retry_failed),
                          out, report)
        except StudyInterrupted as exc:
            print(f"ascentplan sweep: {exc}", file=sys.stderr, flush=True)
            return exc.exit_status


def _results(study, rows, folder: Path, confidence: float) -> tuple[dict, dict | None]:
    """The units of the changed keys, and a dispersion's reserve (recorded in
    study.json)."""
    from ascentplan.problem.loader import read_problem_file

    units = key_units(study.points, read_problem_file(study.problem_path),
                      study.problem_path)
    reserve = None
    if study.kind == "dispersion" and study.nominal_index is not None:
        reserve = dispersion_reserve(rows, study.nominal_index, confidence)
    files = StudyFiles(folder, [])
    if files.meta.exists():
        files.record_results({"dispersion_reserve": reserve} if reserve else {})
    return units, reserve


def _sweep(problem_path, what: dict, confidence, running: dict, out, report) -> int:
    """The sweep command inside its signal handling: exit status 0, 1 or 2."""
    from ascentplan.cautions import CAUTION
    from ascentplan.problem.loader import ProblemError

    try:
        confidence = _check_confidence(confidence)
        study, default = _study(problem_path, **what)
        folder = Path(out) if out is not None else Path("results") / default
        rows = run_study(study, folder, **running)
        status = 1 if any(r.get("error") for r in rows) else 0
    except ProblemError as exc:
        for message in exc.messages:
            print(f"{exc.source or problem_path}: {message}", file=sys.stderr)
        return 2
    except StudyError as exc:
        _print_error(exc)
        return 2
    except StudyIncomplete as exc:
        rows, status = exc.rows, 1
        _print_error(exc)
    units, reserve = _results(study, rows, folder, confidence)
    print(f"ascentplan sweep: {study.name}")
    print(summarise_study(rows, units=units, reserve=reserve))
    print(f"rows written to {folder / STUDY_CSV} and {folder / STUDY_JSONL}")
    if report is not None and rows:
        written = report(folder)
        if written:
            print("written: " + ", ".join(str(p) for p in written))
    print(CAUTION)
    return status
