"""A result folder holds one complete run or the previous one, never a mix.

Checks planner.report.files.output_set directly (staging, swap, lock, refusal, OS
errors) and, through the command line, that a killed run leaves no drawing worker
alive and no staging folder the next run does not clear.
"""

from __future__ import annotations

import errno
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from planner.errors import OutputError
from planner.report.files import output_set


def _earlier_set(folder: Path) -> None:
    folder.mkdir()
    (folder / "plan.json").write_text("earlier")
    (folder / "profile_sheet6.svg").write_text("a sheet the new run does not draw")


def test_a_new_set_replaces_the_old_one_whole(tmp_path):
    out = tmp_path / "out"
    _earlier_set(out)
    with output_set(out) as stage:
        assert stage.parent == tmp_path and stage != out
        (stage / "plan.json").write_text("new")
        (stage / "branched").mkdir()
        (stage / "branched" / "plan.json").write_text("new branch")
    assert sorted(p.name for p in out.iterdir()) == ["branched", "plan.json"]
    assert (out / "plan.json").read_text() == "new"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]     # nothing hidden left


def test_a_failure_keeps_the_previous_set(tmp_path):
    out = tmp_path / "out"
    _earlier_set(out)
    with pytest.raises(RuntimeError):
        with output_set(out) as stage:
            (stage / "plan.json").write_text("new")
            raise RuntimeError("drawing failed")
    assert (out / "plan.json").read_text() == "earlier"
    assert (out / "profile_sheet6.svg").exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_disk_full_is_one_message_and_keeps_the_previous_set(tmp_path):
    out = tmp_path / "out"
    _earlier_set(out)
    with pytest.raises(OutputError, match="No space left on device.*previous results"):
        with output_set(out) as stage:
            raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(stage / "map.html"))
    assert (out / "plan.json").read_text() == "earlier"


def test_a_second_run_into_the_same_folder_is_refused(tmp_path):
    out = tmp_path / "out"
    with output_set(out) as stage:
        with pytest.raises(OutputError, match="another gravplan run is writing"):
            with output_set(out):
                pass
        (stage / "plan.json").write_text("first")
    assert (out / "plan.json").read_text() == "first"


def test_a_killed_runs_staging_folder_is_cleared(tmp_path):
    out = tmp_path / "out"
    _earlier_set(out)
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"],
                          capture_output=True, text=True, check=True)
    stale = tmp_path / ".out.writing"
    stale.mkdir()
    (stale / ".owner").write_text(f'{{"pid": {int(dead.stdout)}, "host": "{os.uname()[1]}"}}')
    (stale / ".plan.json.abc.part").write_text("half")
    with output_set(out) as stage:
        assert not (stage / ".plan.json.abc.part").exists()
        (stage / "plan.json").write_text("new")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_a_set_moved_aside_by_a_killed_run_is_put_back(tmp_path):
    out = tmp_path / "out"
    _earlier_set(tmp_path / ".out.previous")        # killed between the two renames
    with pytest.raises(RuntimeError):
        with output_set(out):
            raise RuntimeError("stop")
    assert (out / "plan.json").read_text() == "earlier"


def test_a_folder_that_is_not_a_result_set_is_never_replaced(tmp_path):
    (tmp_path / "notes.txt").write_text("the engineer's own file")
    with pytest.raises(OutputError, match="not a gravplan result set"):
        with output_set(tmp_path):
            pass
    assert (tmp_path / "notes.txt").exists()


def test_a_folder_under_a_file_is_refused(tmp_path):
    (tmp_path / "report").write_text("a file")
    with pytest.raises(OutputError, match="is a file, not a folder"):
        with output_set(tmp_path / "report" / "out"):
            pass


@pytest.mark.skipif(os.geteuid() == 0, reason="root may write into a read-only folder")
def test_a_read_only_parent_is_one_message(tmp_path):
    tmp_path.chmod(0o555)
    try:
        with pytest.raises(OutputError, match="cannot write results"):
            with output_set(tmp_path / "out"):
                pass
    finally:
        tmp_path.chmod(0o755)


def _children(pid: int) -> set[int]:
    try:
        text = Path(f"/proc/{pid}/task/{pid}/children").read_text()
    except OSError:
        return set()
    return {int(c) for c in text.split()}


def _running(pid: int) -> bool:
    try:
        status = Path(f"/proc/{pid}/status").read_text()
    except OSError:
        return False
    return "\nState:\tZ" not in status


@pytest.mark.skipif(not Path("/proc/self/task").is_dir() or (os.cpu_count() or 1) < 2,
                    reason="needs Linux's /proc and two cores (the drawing workers)")
def test_drawing_workers_exit_when_the_run_is_killed(demo_folder, tmp_path):
    out = tmp_path / "out"
    run = subprocess.Popen([sys.executable, "-m", "planner.cli", "plan",
                            str(demo_folder / "scenario.toml"), "--out", str(out)],
                           stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    workers: set[int] = set()
    deadline = time.monotonic() + 120
    while not workers and run.poll() is None and time.monotonic() < deadline:
        workers = _children(run.pid)
        time.sleep(0.05)
    if not workers:
        run.wait()
        pytest.skip("the run drew in one process on this machine (no workers to watch)")
    time.sleep(0.3)
    workers |= _children(run.pid)
    run.send_signal(signal.SIGKILL)
    run.wait()
    deadline = time.monotonic() + 10
    while any(_running(w) for w in workers) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert not any(_running(w) for w in workers), "a drawing worker outlived its parent"
    assert not out.exists()                   # no half set where the results go
    rerun = subprocess.run([sys.executable, "-m", "planner.cli", "plan",
                            str(demo_folder / "scenario.toml"), "--out", str(out)],
                           capture_output=True, text=True)
    assert rerun.returncode == 0, rerun.stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]
    assert not [p for p in out.rglob(".*")], "a hidden temporary file is left in the set"
