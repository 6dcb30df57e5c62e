"""Stopping a study on SIGINT (Ctrl-C) and SIGTERM: the signal becomes a
:class:`~ascentplan.study.errors.StudyInterrupted` in the main process, which stops its
worker processes and leaves the study folder ready to resume.

Python runs a signal handler in the main thread between bytecodes, and a handler may raise
an exception there (Python documentation, :mod:`signal`, "Execution of Python signal
handlers"); handlers can be set from the main thread only. A handler that raises could cut
a row between ``study.jsonl`` and ``study.csv``, or lose track of a worker process being
started, so those steps hold a signal until they are done (:func:`held`).
"""

from __future__ import annotations

import signal
import threading
from contextlib import contextmanager

from ascentplan.study.errors import StudyInterrupted

__all__ = ["STOP_SIGNALS", "held", "stop_on_signals"]

#: the signals that stop a study
STOP_SIGNALS = (signal.SIGINT, signal.SIGTERM)


class _Hold:
    """How many :func:`held` blocks are open, and the first stop signal that arrived in
    one of them."""

    depth = 0
    pending: int | None = None


def _stopped(signum: int) -> StudyInterrupted:
    return StudyInterrupted(f"stopped by {signal.Signals(signum).name}", [], signum)


def _handler(signum, frame) -> None:
    if _Hold.depth:
        if _Hold.pending is None:
            _Hold.pending = signum
        return
    raise _stopped(signum)


@contextmanager
def stop_on_signals():
    """While inside, SIGINT and SIGTERM raise :class:`StudyInterrupted` (with the signal's
    number) in the main thread; the previous handlers are restored on leaving.

    Outside the main thread, where Python cannot set handlers, nothing changes. Blocks
    may nest (the study command around the study run).
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = {s: signal.getsignal(s) for s in STOP_SIGNALS}
    for s in STOP_SIGNALS:
        signal.signal(s, _handler)
    try:
        yield
    finally:
        for s, handler in previous.items():
            # None: a handler not set from Python; the default is the closest
            signal.signal(s, signal.SIG_DFL if handler is None else handler)
        if not any(h is _handler for h in previous.values()):
            _Hold.pending = None


@contextmanager
def held():
    """Hold a stop signal until the block ends, then raise it.

    When the block itself raises (a study already stopping), the held signal is not
    raised over that exception: the study is stopping either way.
    """
    _Hold.depth += 1
    try:
        yield
    finally:
        _Hold.depth -= 1
    if _Hold.depth == 0 and _Hold.pending is not None:
        signum, _Hold.pending = _Hold.pending, None
        raise _stopped(signum)
