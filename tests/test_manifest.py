"""One writer per results folder: the folder lock of sdmnet.output.manifest.

The lock is an OS file lock (flock on the folder's lock file): the kernel drops it when its
holder exits in any way, so a lock file left by a crash never blocks a later run.  These tests
use real processes, since a lock held by this very process is re-entrant by design.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
from pathlib import Path

import pytest

from sdmnet.errors import InputError
from sdmnet.output.manifest import LOCK_FILE, out_dir_lock

# A process that holds FOLDER locked until it is killed, after saying so on stdout.
HOLDER = """
import sys, time
from sdmnet.output.manifest import out_dir_lock
with out_dir_lock(sys.argv[1]):
    print("held", flush=True)
    time.sleep(120)
"""


def _hold(folder: Path) -> subprocess.Popen:
    proc = subprocess.Popen([sys.executable, "-c", HOLDER, str(folder)], stdout=subprocess.PIPE, text=True)
    assert proc.stdout is not None and proc.stdout.readline().strip() == "held"
    return proc


def test_a_second_process_is_refused_naming_the_folder_and_the_holder(tmp_path: Path) -> None:
    out = tmp_path / "out"
    holder = _hold(out)
    try:
        with pytest.raises(InputError) as caught, out_dir_lock(out):
            pass
        message = str(caught.value)
        assert message.startswith(f"{out}: --out: another sdmnet run (process {holder.pid}) is writing")
        assert "\n" not in message
    finally:
        holder.kill()
        holder.wait()


def test_a_lock_file_left_by_a_killed_holder_does_not_block(tmp_path: Path) -> None:
    out = tmp_path / "out"
    holder = _hold(out)
    holder.send_signal(signal.SIGKILL)  # a crash: no clean-up runs
    holder.wait()
    assert (out / LOCK_FILE).read_text().strip() == str(holder.pid)  # the stale file is still there
    with out_dir_lock(out) as path:
        assert path == out
        assert (out / LOCK_FILE).read_text().strip() == str(os.getpid())


def test_the_lock_is_released_when_the_block_ends_even_by_an_error(tmp_path: Path) -> None:
    out = tmp_path / "out"
    with pytest.raises(RuntimeError), out_dir_lock(out):
        raise RuntimeError("a failed run")
    holder = _hold(out)  # another process takes it now (_hold checks it got it)
    holder.kill()
    holder.wait()


def test_nested_use_by_one_process_holds_the_lock_once(tmp_path: Path) -> None:
    out = tmp_path / "out"
    with out_dir_lock(out):
        with out_dir_lock(tmp_path / "." / "out"):  # the same folder, spelt otherwise
            pass
        # Still held after the inner block: another process is refused.
        code = f"from sdmnet.output.manifest import out_dir_lock\nwith out_dir_lock({str(out)!r}): pass"
        refused = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
        assert refused.returncode != 0 and "another sdmnet run" in refused.stderr


def test_a_folder_that_cannot_be_created_is_an_input_error(tmp_path: Path) -> None:
    (tmp_path / "file").write_text("x")
    with pytest.raises(InputError, match="cannot write the output folder"), out_dir_lock(tmp_path / "file" / "out"):
        pass
