"""Helpers shared by the input and fault tests (fixtures live in the test modules)."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

from clipscribe import Project

SRC = Path(__file__).parents[2] / "src"
LABELS = ["pick up", "put down", "stack"]


def small_project(folder: Path, make_video, clips: int = 2) -> Project:
    """A project with three labels, annotators ann-a and ann-b, ``clips`` clips under g1/."""
    p = Project.create(folder, user="lead")
    p.define_labels(LABELS)
    p.add_annotator("ann-a")
    p.add_annotator("ann-b")
    for i in range(clips):
        make_video(p.media_root / "g1" / f"c{i}.mp4", seed=i)
    rep = p.add_media(p.media_root)
    assert len(rep.added) == clips
    return p


def env() -> dict[str, str]:
    e = dict(os.environ)
    e["PYTHONPATH"] = str(SRC) + os.pathsep + e.get("PYTHONPATH", "")
    e.pop("CLIPSCRIBE_DEBUG", None)
    return e


def run_cli(*args: str, as_unprivileged: bool = False, timeout: float = 120,
            **kw) -> subprocess.CompletedProcess:
    """Run ``clipscribe ARGS`` in a fresh interpreter. ``as_unprivileged`` drops the file
    permission override a root user has (so unreadable and read-only files behave as they do
    for everyone else)."""
    cmd = [sys.executable, "-m", "clipscribe.cli", *args]
    if as_unprivileged and os.geteuid() == 0:
        cmd = [shutil.which("setpriv"), "--bounding-set", "-dac_override,-dac_read_search", *cmd]
    return subprocess.run(cmd, capture_output=True, text=True, env=env(), timeout=timeout, **kw)


def can_drop_privileges() -> bool:
    """True when :func:`run_cli` with ``as_unprivileged`` really makes permissions bite."""
    if os.name != "posix" or shutil.which("setpriv") is None:
        return False
    if os.geteuid() != 0:
        return True  # permissions already bite
    r = subprocess.run([shutil.which("setpriv"), "--bounding-set", "-dac_override,-dac_read_search",
                        "true"], capture_output=True)
    return r.returncode == 0


def one_error_line(stderr: str) -> str:
    """The single ``clipscribe: error: ...`` line of a failed command (no traceback)."""
    lines = [l for l in stderr.splitlines() if l.strip()]
    assert "Traceback" not in stderr, stderr
    assert len(lines) == 1 and lines[0].startswith("clipscribe: error: "), stderr
    assert "unexpected" not in lines[0], stderr
    return lines[0]
