"""Checks on the files a user names, made before any library opens them.

One place for what every input file must be: present, a regular file (a folder, a
named pipe or a device would hang a reader or fail deep inside it), readable, and,
for text, UTF-8.  Each failure is an :class:`~planner.errors.InputFileError` naming
the file and what to do.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from .errors import InputFileError


def regular_file(path: str | Path, what: str) -> Path:
    """``path`` as a Path once it is known to be a readable regular file.

    ``what`` names the file's role in messages ("DEM file", "route file").

    >>> regular_file("/", "route file")
    Traceback (most recent call last):
    ...
    planner.errors.InputFileError: /: the route file is a folder, not a file; give the file's path
    """
    p = Path(path)
    try:
        mode = p.stat().st_mode
    except FileNotFoundError:
        raise InputFileError(f"{p}: {what} not found") from None
    except OSError as exc:
        raise InputFileError(f"{p}: cannot reach the {what} ({exc.strerror or exc})") from None
    if stat.S_ISDIR(mode):
        raise InputFileError(f"{p}: the {what} is a folder, not a file; give the file's path")
    if not stat.S_ISREG(mode):
        kind = "a named pipe" if stat.S_ISFIFO(mode) else "a device or socket"
        raise InputFileError(f"{p}: the {what} is {kind}, not a regular file; gravplan reads "
                             "files only (copy the data to a file first)")
    if not os.access(p, os.R_OK):
        raise InputFileError(f"{p}: the {what} cannot be read (permission denied)")
    return p


def read_text(path: str | Path, what: str) -> str:
    """The UTF-8 text of the ``what`` at ``path``, without a leading byte-order mark."""
    p = regular_file(path, what)
    try:
        text = p.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        raise InputFileError(
            f"{p}: the {what} is not UTF-8 text (byte {exc.start}: {exc.object[exc.start:exc.start + 1]!r}); "
            "save it as UTF-8 (a spreadsheet's 'CSV UTF-8' or an editor's encoding menu)") from None
    except OSError as exc:
        raise InputFileError(f"{p}: cannot read the {what} ({exc.strerror or exc})") from None
    return text.removeprefix("\ufeff")
