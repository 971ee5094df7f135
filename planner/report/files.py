"""Atomic file writing: a result file is either complete or not there at all."""

from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager
from pathlib import Path


@contextmanager
def atomic_path(target: str | Path, *, suffix: str = ".part"):
    """Yield a temporary path beside ``target``; move it into place on success.

    On any exception the temporary file is removed and ``target`` is untouched.
    ``suffix`` lets libraries that choose a format by file name see the right one.
    """
    target = Path(target)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=suffix, dir=target.parent)
    os.close(fd)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    try:
        yield Path(tmp)
        os.replace(tmp, target)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def write_text(target: str | Path, text: str) -> Path:
    """Write UTF-8 text atomically; return the target path."""
    with atomic_path(target) as tmp:
        tmp.write_text(text, encoding="utf-8")
    return Path(target)
