"""Atomic file writing: a result file is either complete or not there at all."""

from __future__ import annotations

import os
import shutil
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


MARKER = "plan.json"
"""The file every gravplan result set holds: a folder with it may be replaced."""


@contextmanager
def output_set(target: str | Path):
    """Yield an empty staging folder beside ``target``; swap it in whole on success.

    A folder therefore holds one complete run or the previous one, never a mix: files
    of the previous run that the new one does not write are gone, and a failure
    anywhere leaves the previous set as it was.  The staging folder
    ``.<name>.writing`` is also the lock: a second run into the same ``target`` is
    refused while the first one lives, and a folder left by a killed run is removed by
    the next one (its owner, recorded inside, is no longer running).  A ``target``
    that holds files but no ``plan.json`` is not a result set and is never replaced.
    OS errors (read-only, disk full, not a directory) become one-line
    :class:`~planner.errors.OutputError` messages naming the folder.
    """
    from ..errors import OutputError

    target = Path(target)
    try:
        _check_target(target)
        target.parent.mkdir(parents=True, exist_ok=True)
        stage = _claim(target)
    except OSError as exc:
        if isinstance(exc, OutputError):
            raise
        raise OutputError(f"cannot write results to {target}: {_reason(exc)}") from None
    try:
        yield stage
        (stage / _OWNER).unlink()
        _swap(stage, target)
    except OSError as exc:
        shutil.rmtree(stage, ignore_errors=True)
        if isinstance(exc, OutputError):
            raise
        raise OutputError(f"cannot write results to {target}: {_reason(exc)}; the "
                          "previous results there are unchanged") from None
    except BaseException:
        shutil.rmtree(stage, ignore_errors=True)
        raise


_OWNER = ".owner"


def _reason(exc: OSError) -> str:
    """An OS error in words, with the file it concerns when that is not the folder."""
    text = exc.strerror or str(exc)
    return f"{text} ({exc.filename})" if exc.filename else text


def _check_target(target: Path) -> None:
    from ..errors import OutputError

    for folder in (target, *target.parents):
        if folder.exists() and not folder.is_dir():
            raise OutputError(f"cannot write results to {target}: {folder} is a file, "
                              "not a folder; choose another --out")
    if target.is_dir() and any(target.iterdir()) and not (target / MARKER).is_file():
        raise OutputError(f"{target} holds files that are not a gravplan result set (no "
                          f"{MARKER}); choose an empty or new folder for --out")


def _claim(target: Path) -> Path:
    """Create the staging folder (the lock), removing one a dead run left behind."""
    import json
    import socket

    from ..errors import OutputError

    stage = target.parent / f".{target.name}.writing"
    me = {"pid": os.getpid(), "host": socket.gethostname()}
    for _ in range(3):
        try:
            stage.mkdir()
        except FileExistsError:
            owner = _owner(stage)
            if owner is None or owner.get("host") != me["host"] or _alive(owner.get("pid")):
                raise OutputError(
                    f"another gravplan run is writing {target} (folder {stage}, process "
                    f"{(owner or {}).get('pid', '?')}); wait for it, or delete {stage} if no "
                    "run is going on") from None
            shutil.rmtree(stage, ignore_errors=True)
            continue
        (stage / _OWNER).write_text(json.dumps(me), encoding="utf-8")
        _restore(target)
        return stage
    raise OutputError(f"cannot take {stage} for writing {target}; delete it and run again")


def _owner(stage: Path) -> dict | None:
    import json
    import time

    for _ in range(20):     # the owner writes its record just after creating the folder
        try:
            return json.loads((stage / _OWNER).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            time.sleep(0.05)
    return None


def _alive(pid) -> bool:
    if not isinstance(pid, int) or pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _previous(target: Path) -> Path:
    return target.parent / f".{target.name}.previous"


def _restore(target: Path) -> None:
    """Put back a set a killed run had moved aside but not yet replaced."""
    old = _previous(target)
    if old.is_dir():
        if target.exists():
            shutil.rmtree(old)
        else:
            os.replace(old, target)


def _swap(stage: Path, target: Path) -> None:
    old = _previous(target)
    if target.exists():
        os.replace(target, old)
    os.replace(stage, target)
    shutil.rmtree(old, ignore_errors=True)
