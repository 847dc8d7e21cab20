"""Work killed half-way (kill -9) and done again: a copy into the media root resumes in the
same folder without duplicate clips, and an export cleans the unfinished folders an earlier,
killed export left beside its output."""

from __future__ import annotations

import subprocess
import sys

import pytest

from clipscribe import Project
from clipscribe.cli import main

from ._fixtures import env, small_project

KILLED_COPY = """
import os, signal, sys
from clipscribe import Project
from clipscribe.media import copy_in
copy_in.CHUNK = 2000
def progress(done, total):
    if done > 0.6 * total:
        os.kill(os.getpid(), signal.SIGKILL)
with Project.open(sys.argv[1], user="lead") as p:
    p.copy_media_in(sys.argv[2], progress=progress)
"""

KILLED_EXPORT = """
import os, signal, sys
from clipscribe import Project
def progress(done, total):
    if done >= 2:
        os.kill(os.getpid(), signal.SIGKILL)
with Project.open(sys.argv[1], user="lead") as p:
    plan = p.plan_export({"train": 0.5, "test": 0.5}, min_agreement=0.0)
    p.write_export(sys.argv[2], plan, override_reason="test", media_mode="copy", progress=progress)
"""


def _killed(script, *args):
    r = subprocess.run([sys.executable, "-c", script, *map(str, args)], capture_output=True,
                       text=True, env=env(), timeout=120)
    assert r.returncode == -9, r.stderr  # it really was killed mid-way


@pytest.fixture
def proj(tmp_path, make_video):
    with small_project(tmp_path / "proj", make_video, clips=4) as p:
        for c in p.clips():
            p.set_clip_label(c.id, "ann-a", "stack")
        yield p.folder


def _cli(capsys, *args):
    rc = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return rc, out, err


def test_a_killed_copy_resumes_in_the_same_folder_without_duplicates(proj, tmp_path, make_video,
                                                                     capsys):
    src = tmp_path / "shoot"
    for i in range(4):
        make_video(src / f"take-{i}.mp4", n=30, size=(160, 120), seed=20 + i)
    _killed(KILLED_COPY, proj, src)
    dest = proj / "media" / "shoot"
    left = sorted(p.name for p in dest.iterdir())
    assert any(n.endswith(".part") for n in left), left       # the fault really left a .part
    assert any(n.endswith(".mp4") and not n.startswith(".") for n in left), left
    rc, out, err = _cli(capsys, "add-media", proj, "--copy-from", src, "--user", "lead")
    assert rc == 0, err
    assert f"copied into {dest}" in out and "added 4 clip(s)" in out
    assert not (proj / "media" / "shoot-2").exists()
    assert sorted(p.name for p in dest.iterdir()) == [f"take-{i}.mp4" for i in range(4)]
    for i in range(4):
        assert (dest / f"take-{i}.mp4").read_bytes() == (src / f"take-{i}.mp4").read_bytes()
    rc, out, _ = _cli(capsys, "add-media", proj, "--copy-from", src, "--user", "lead")
    assert rc == 0 and "added 0 clip(s); 4 already present" in out
    with Project.open(proj) as p:
        assert len(p.clips()) == 8 and len({c.path for c in p.clips()}) == 8


def test_an_export_cleans_what_a_killed_export_left(proj, tmp_path, capsys):
    out = tmp_path / "out"
    _killed(KILLED_EXPORT, proj, out)
    stale = [p for p in tmp_path.iterdir() if p.name.startswith(".out.") and p.name.endswith(".partial")]
    assert len(stale) == 1 and any(stale[0].rglob("*.mp4"))
    assert not out.exists()
    rc, stdout, err = _cli(capsys, "export", proj, out, "--override", "test", "--min-agreement", "0",
                           "--user", "lead")
    assert rc == 0, err
    assert f"removed {stale[0].name}, left unfinished by an earlier export" in stdout
    assert not [p for p in tmp_path.iterdir() if p.name.startswith(".out.")]
    assert (out / "manifest.json").is_file()
