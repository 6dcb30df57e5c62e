"""Progress of a running study on stderr: a tqdm bar (points done of the study's points,
with the rate and the time left), on by default and silent when asked (``--quiet``)."""

from __future__ import annotations

import sys

from tqdm import tqdm

__all__ = ["Progress"]


class Progress:
    """Progress of a study; silent when not ``enabled``.

    Parameters
    ----------
    enabled : bool
    total : int
        Points in the study.
    done : int
        Points finished before this run (a resume starts the bar there).
    name : str
        The study's title, for the bar.
    """

    def __init__(self, enabled: bool, total: int, done: int, name: str):
        self.enabled, self.total, self.count = enabled, total, done
        self.failed = 0
        self.bar = None
        if enabled:
            self.bar = tqdm(total=total, initial=done, desc=name, unit="point",
                            file=sys.stderr, dynamic_ncols=True)

    def note(self, text: str) -> None:
        """A line of text about the run (where it runs, how much is left), above the bar."""
        if self.bar is not None:
            self.bar.write(text, file=sys.stderr)

    def point(self, row: dict) -> None:
        """One point finished with ``row``."""
        self.count += 1
        if row.get("error") or row.get("status") not in ("optimal", None):
            self.failed += 1
        if self.bar is None:
            return
        if self.failed:
            # a study whose points fail should not look clean at a glance
            self.bar.set_postfix_str(f"{self.failed} not optimal", refresh=False)
        self.bar.update(1)

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
