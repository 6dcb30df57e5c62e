"""Result files written whole or not at all.

Each file is written to a temporary file in the same folder and renamed onto its name
when complete: a rename within one file system replaces the old file in one step
(POSIX ``rename``; ``os.replace`` on Windows too), so a run killed while writing leaves
the previous file, never half of a new one.
"""

from __future__ import annotations

import contextlib
import os
import secrets

#: longest file name most file systems accept [bytes]
_NAME_MAX = 255


def _temporary_name(path: str) -> str:
    """A fresh hidden name beside ``path``, short enough for the file system."""
    folder, base = os.path.split(path)
    tag = f".{secrets.token_hex(4)}.tmp"
    # a dot first keeps the half-written file out of listings and of the report's globs
    room = _NAME_MAX - len(tag) - 1
    stem = base.encode("utf-8", "surrogateescape")[:room].decode("utf-8", "ignore")
    return os.path.join(folder, f".{stem}{tag}")


@contextlib.contextmanager
def atomic_open(path, mode: str = "w", **kwargs):
    """Open a temporary file beside ``path``; on success rename it onto ``path``.

    Parameters
    ----------
    path : str or path-like
        The file to (re)write; its folder must exist.
    mode : str
        ``"w"`` (text; ``kwargs`` such as ``encoding`` and ``newline`` are passed on to
        :func:`open`) or ``"wb"``.

    Yields
    ------
    file object
        The temporary file. When the block raises, the temporary file is removed and
        ``path`` is left as it was.
    """
    target = os.fspath(path)
    temporary = _temporary_name(target)
    # "x": never write through a name that already exists (a link planted there)
    handle = open(temporary, mode.replace("w", "x"), **kwargs)
    try:
        with handle:
            yield handle
            handle.flush()
            # on the disk before the rename, so a crash of the machine cannot leave the
            # new name pointing at an empty file
            os.fsync(handle.fileno())
        os.replace(temporary, target)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(temporary)
        raise


def write_text(path, text: str) -> None:
    """Write ``text`` as UTF-8 to ``path`` atomically (:func:`atomic_open`)."""
    with atomic_open(path, "w", encoding="utf-8") as fh:
        fh.write(text)
