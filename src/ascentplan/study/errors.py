"""What a trade study raises: a study that cannot run as described, one that ran only in
part, and one that was stopped by a signal."""

from __future__ import annotations

import signal

__all__ = ["StudyError", "StudyIncomplete", "StudyInterrupted"]


class StudyError(ValueError):
    """A study that cannot be run as described: a bad key, value, argument or folder.

    The message names the argument (or key path) and the value; a changed problem that
    the problem loader refuses carries the loader's messages, one per line.
    """


class StudyIncomplete(RuntimeError):
    """Some points were not run because worker processes were lost; the finished rows are
    kept in the study folder and running the study again resumes it.

    Attributes
    ----------
    indices : list of int
        The points not run.
    rows : list of dict
        The rows of the points that were finished, by index.
    """

    def __init__(self, message: str, indices, rows):
        super().__init__(message)
        self.indices = list(indices)
        self.rows = list(rows)


class StudyInterrupted(KeyboardInterrupt):
    """The study was stopped by SIGINT (Ctrl-C) or SIGTERM; its worker processes are
    stopped, the rows finished so far are in the study folder and running the study again
    resumes it. Still a :class:`KeyboardInterrupt`.

    Attributes
    ----------
    rows : list of dict
        The rows of the points that were finished, by index.
    signal_number : int
        The signal that stopped the study (``signal.SIGINT`` or ``signal.SIGTERM``).
    exit_status : int
        128 + ``signal_number`` (130 for SIGINT, 143 for SIGTERM): the status a shell
        reports for a process ended by that signal (common practice of POSIX shells).
    """

    def __init__(self, message: str, rows, signal_number: int = signal.SIGINT):
        super().__init__(message)
        self.rows = list(rows)
        self.signal_number = int(signal_number)

    @property
    def exit_status(self) -> int:
        return 128 + self.signal_number
