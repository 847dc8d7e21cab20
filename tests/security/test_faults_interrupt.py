"""Ctrl+C in the terminal that started the window closes it cleanly: the window closes the
normal way (the project is closed, so SQLite's write-ahead log is folded back and removed),
the command exits with the usual status for an interrupt (130), and no traceback is printed."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time

import pytest

from ._fixtures import env, small_project

GUARD_S = 90  # only a guard against a hang; nothing is timed


def test_ctrl_c_closes_the_window_cleanly(tmp_path, make_video):
    with small_project(tmp_path / "proj", make_video, clips=1) as p:
        folder = p.folder
    wal = folder / "project.sqlite-wal"
    assert not wal.exists()  # a closed project leaves no log behind
    e = env()
    e["QT_QPA_PLATFORM"] = "offscreen"
    proc = subprocess.Popen([sys.executable, "-m", "clipscribe.cli", "open", str(folder),
                             "--user", "ann-a"], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True, env=e)
    try:
        deadline = time.monotonic() + GUARD_S
        while not wal.exists():  # the project is open: the interrupt handler is in place
            if proc.poll() is not None or time.monotonic() > deadline:
                pytest.fail(f"the window did not come up: {proc.communicate()[1][-2000:]}")
            time.sleep(0.05)
        proc.send_signal(signal.SIGINT)
        out, err = proc.communicate(timeout=GUARD_S)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 130, err
    assert "Traceback" not in err and "KeyboardInterrupt" not in err, err
    assert "the window was closed" in err
    assert not wal.exists(), "the project was not closed cleanly"
