"""Progress of a running study on stderr: a tqdm bar when tqdm is installed, else one line
per finished point."""

from __future__ import annotations

import sys

__all__ = ["Progress"]


def _stderr(text: str) -> None:
    print(text, file=sys.stderr, flush=True)


class Progress:
    """Progress of a study; silent when not ``enabled``.

    Parameters
    ----------
    enabled : bool
    total : int
        Points in the study.
    done : int
        Points finished before this run.
    name : str
        The study's title, for the bar.
    """

    def __init__(self, enabled: bool, total: int, done: int, name: str):
        self.enabled, self.total, self.count = enabled, total, done
        self.bar = None
        if not enabled:
            return
        try:
            from tqdm import tqdm
        except ImportError:
            return
        self.bar = tqdm(total=total, initial=done, desc=name, unit="point", file=sys.stderr)

    def note(self, text: str) -> None:
        """A line of text about the run (where it runs, how much is left)."""
        if self.enabled:
            (self.bar.write if self.bar is not None else _stderr)(text)

    def point(self, row: dict) -> None:
        """One point finished with ``row``."""
        self.count += 1
        if not self.enabled:
            return
        if self.bar is not None:
            self.bar.update(1)
            return
        if row.get("error"):
            what = f"failed: {row['error']}"
        elif row.get("objective") is not None:
            what = f"{row['status']}, objective {row['objective']:.6g} {row['objective_unit']}"
        else:
            what = row["status"]
        _stderr(f"[{self.count}/{self.total}] point {row['index']}: {what} "
                f"({row.get('wall_time_s', 0.0):.2f} s)")

    def close(self) -> None:
        if self.bar is not None:
            self.bar.close()
