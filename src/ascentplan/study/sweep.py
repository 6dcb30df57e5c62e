"""Trade studies: a problem solved at many points (a sweep of a limit, a dispersion of the
problem data), on local worker processes or a Dask distributed cluster, written row by row
so that an interrupted study resumes from what it wrote.

This module gathers the public names of the study modules:

:mod:`ascentplan.study.spec`
    :class:`Study`, :func:`limit_sweep`, :func:`dispersion`.
:mod:`ascentplan.study.document`
    Problem-file key paths and changes applied to the problem document, read back by the
    problem loader: :func:`apply_changes`, :func:`check_keys`.
:mod:`ascentplan.study.runner`
    :func:`run_study` on local processes (:mod:`ascentplan.study.pool`) or Dask; SIGINT
    and SIGTERM stop it (:mod:`ascentplan.study.stopping`).
:mod:`ascentplan.study.files`
    The study folder: ``study.jsonl``, ``study.csv``, ``study.json``.
:mod:`ascentplan.study.summary`
    :func:`sweep_slopes`, :func:`summarise_study`.
:mod:`ascentplan.study.command`
    :func:`sweep_command`, the ``sweep`` verb.
"""

from __future__ import annotations

from ascentplan.study.command import sweep_command
from ascentplan.study.document import apply_changes, check_keys
from ascentplan.study.errors import StudyError, StudyIncomplete, StudyInterrupted
from ascentplan.study.files import STUDY_CSV, STUDY_JSON, STUDY_JSONL
from ascentplan.study.runner import MAX_CHUNK, run_study
from ascentplan.study.spec import DISPERSION_KINDS, Study, dispersion, limit_sweep
from ascentplan.study.summary import summarise_study, sweep_slopes

__all__ = ["DISPERSION_KINDS", "MAX_CHUNK", "STUDY_CSV", "STUDY_JSON", "STUDY_JSONL", "Study",
           "StudyError", "StudyIncomplete", "StudyInterrupted", "apply_changes", "check_keys",
           "dispersion", "limit_sweep", "run_study", "summarise_study", "sweep_command",
           "sweep_slopes"]
