"""The ``sweep`` command: arguments in, a study run, its summary printed. The only part of
the trade-study code that prints."""

from __future__ import annotations

import re
import sys
from pathlib import Path

from ascentplan.study import spec
from ascentplan.study.errors import StudyError, StudyIncomplete, StudyInterrupted
from ascentplan.study.files import STUDY_CSV, STUDY_JSONL
from ascentplan.study.runner import run_study
from ascentplan.study.stopping import stop_on_signals
from ascentplan.study.summary import summarise_study

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


def _study(problem_path, limit, values, dispersion, samples, seed) -> tuple:
    """The study the arguments describe, and its default folder name."""
    from ascentplan.problem.loader import load_problem

    if (limit is None) == (dispersion is None):
        raise StudyError("give either a limit with values to sweep, or a dispersion "
                         "with a number of samples")
    if limit is not None:
        if samples is not None:
            raise StudyError("samples: applies to a dispersion, not to a limit sweep")
        study = spec.limit_sweep(problem_path, limit, values)
        return study, f"{load_problem(problem_path).name}-sweep-{limit}"
    if values is not None:
        raise StudyError("values: applies to a limit sweep, not to a dispersion")
    if samples is None:
        raise StudyError("samples: a dispersion needs a number of samples")
    study = spec.dispersion(problem_path, _parse_dispersion(dispersion), samples, seed)
    return study, f"{load_problem(problem_path).name}-dispersion-seed{seed}"


def _print_error(exc: Exception) -> None:
    # a refused changed problem carries the loader's messages, one per line
    for line in str(exc).split("\n"):
        print(f"ascentplan sweep: {line}", file=sys.stderr)


def sweep_command(problem_path, *, limit: str | None = None, values=None, dispersion=None,
                  samples: int | None = None, seed: int = 0, workers: int | None = None,
                  scheduler=None, out=None, retry_failed: bool = False,
                  progress: bool = True) -> int:
    """Run a limit sweep or a dispersion from the command line; print the summary.

    Parameters
    ----------
    problem_path : str
    limit : str, optional
        The limit to sweep, with ``values`` (strings with units, e.g. ``"25 kPa"``, or
        plain numbers in the limit's ``si_unit``: Pa, g0, Pa rad, m).
    dispersion : dict or list of str, optional
        Instead of a limit: ``{key: (kind, spread)}`` or strings
        ``"KEY=KIND:SPREAD"`` (``vehicle.stages[0].thrust_vacuum=normal:2%``), with
        ``samples`` and ``seed``.
    workers, scheduler, retry_failed, progress
        As for :func:`~ascentplan.study.runner.run_study`.
    out : str, optional
        Study folder; default ``results/<problem name>-sweep-<limit>`` or
        ``results/<problem name>-dispersion-seed<seed>``.

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
            return _sweep(problem_path, limit, values, dispersion, samples, seed,
                          dict(workers=workers, scheduler=scheduler, progress=progress,
                               retry_failed=retry_failed), out)
        except StudyInterrupted as exc:
            print(f"ascentplan sweep: {exc}", file=sys.stderr, flush=True)
            return exc.exit_status


def _sweep(problem_path, limit, values, dispersion, samples, seed, running: dict,
           out) -> int:
    """The sweep command inside its signal handling: exit status 0, 1 or 2."""
    from ascentplan.cautions import CAUTION
    from ascentplan.problem.loader import ProblemError

    try:
        study, default = _study(problem_path, limit, values, dispersion, samples, seed)
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
    print(f"ascentplan sweep: {study.name}")
    print(summarise_study(rows))
    print(f"rows written to {folder / STUDY_CSV} and {folder / STUDY_JSONL}")
    print(CAUTION)
    return status
