"""Bad file names and folders under the media root: a name that is not UTF-8, symbolic links,
unreadable files and folders, special file systems and a media root of "/". Each is set aside
with one line naming it and the true reason; the scan goes on; nothing crashes."""

from __future__ import annotations

import json
import os
import subprocess

import pytest

from clipscribe import Project, ProjectError, RecordError
from clipscribe.cli import main
from clipscribe.schema.settings import SETTINGS_FILE

from ._fixtures import can_drop_privileges, one_error_line, run_cli, small_project


@pytest.fixture
def proj(tmp_path, make_video):
    with small_project(tmp_path / "proj", make_video, clips=2) as p:
        yield p


def _skipped(stdout):
    return [l.strip() for l in stdout.splitlines() if l.strip().startswith("skipped ")]


def test_a_name_that_is_not_utf8_is_skipped_before_opencv_sees_it(proj, make_video):
    root = os.fsencode(proj.media_root)
    good = make_video(proj.media_root / "g2" / "fine.mp4", seed=5)
    bad = os.path.join(root, b"g2", b"caf\xe9-take.mp4")  # Latin-1 bytes, not UTF-8
    with open(good, "rb") as f, open(bad, "wb") as g:
        g.write(f.read())
    r = run_cli("add-media", str(proj.folder))   # a crash in OpenCV would be a signal, not 1
    assert r.returncode == 0, r.stderr
    assert "added 1 clip(s)" in r.stdout
    (line,) = _skipped(r.stdout)
    assert "caf\\xe9-take.mp4" in line and "not valid UTF-8" in line
    with pytest.raises(RecordError, match="not valid UTF-8"):
        proj.add_clip(os.fsdecode(bad))


def test_links_are_skipped_and_listed_and_the_scan_goes_on(proj, tmp_path, make_video):
    outside = make_video(tmp_path / "elsewhere" / "secret.mp4", seed=9)
    (proj.media_root / "links").mkdir()
    os.symlink(proj.media_root / "g1" / "c0.mp4", proj.media_root / "links" / "again.mp4")
    os.symlink(outside, proj.media_root / "links" / "out.mp4")
    os.symlink(tmp_path / "elsewhere", proj.media_root / "links" / "folder")
    make_video(proj.media_root / "links" / "real.mp4", seed=7)
    rep = proj.add_media(proj.media_root)
    assert len(rep.added) == 1 and len(proj.clips()) == 3
    why = dict(rep.skipped)
    assert set(why) == {"links/again.mp4", "links/out.mp4", "links/folder"}
    assert all("symbolic link" in w for w in why.values())
    assert str(outside) in why["links/out.mp4"]
    assert not [c for c in proj.clips() if "secret" in c.path]


needs_unprivileged = pytest.mark.skipif(not can_drop_privileges(),
                                        reason="cannot run a command without root's file override")


@needs_unprivileged
def test_unreadable_file_and_folder_are_named_with_the_true_reason(proj, make_video):
    make_video(proj.media_root / "locked" / "a.mp4", seed=3)
    make_video(proj.media_root / "open" / "b.mp4", seed=4)
    make_video(proj.media_root / "open" / "c.mp4", seed=6)
    os.chmod(proj.media_root / "open" / "c.mp4", 0)
    os.chmod(proj.media_root / "locked", 0)
    try:
        r = run_cli("add-media", str(proj.folder), as_unprivileged=True)
    finally:
        os.chmod(proj.media_root / "locked", 0o755)
    assert r.returncode == 0, r.stderr
    assert "added 1 clip(s)" in r.stdout
    lines = _skipped(r.stdout)
    assert any(l.startswith("skipped locked:") and "Permission denied" in l for l in lines), lines
    assert any("open/c.mp4" in l and "Permission denied" in l for l in lines), lines


@pytest.mark.parametrize("root", ["/", "/proc", "../outside", "/usr/share"])
def test_a_media_root_that_would_walk_the_machine_is_refused(proj, root, capsys):
    path = proj.folder / SETTINGS_FILE
    data = json.loads(path.read_text())
    data["media_root"] = root
    path.write_text(json.dumps(data))
    with pytest.raises(ProjectError, match="media_root"):
        Project.open(proj.folder)
    assert main(["add-media", str(proj.folder)]) == 1
    assert "media root" in one_error_line(capsys.readouterr().err)


def test_a_media_root_holding_the_project_is_refused(tmp_path):
    with pytest.raises(ProjectError, match="contains the project folder"):
        Project.create(tmp_path / "p", media_root=str(tmp_path))


def test_a_special_file_system_below_the_media_root_is_not_walked(proj):
    target = proj.media_root / "sys-view"
    target.mkdir()
    r = subprocess.run(["mount", "-t", "proc", "proc", str(target)], capture_output=True)
    if r.returncode != 0:
        pytest.skip("cannot mount a proc file system here")
    try:
        rep = proj.add_media(proj.media_root)
    finally:
        subprocess.run(["umount", "-l", str(target)], capture_output=True)
    assert ("sys-view", "a special file system, not scanned") in rep.skipped


@pytest.mark.parametrize("name", ["50% done", "take #1", "what?x", "a?b#c%d e"])
def test_a_project_folder_name_with_url_characters_keeps_its_database_inside(tmp_path, name):
    folder = tmp_path / name
    Project.create(folder, user="lead").close()
    assert sorted(p.name for p in tmp_path.iterdir()) == [name]  # nothing made beside it
    assert (folder / "project.sqlite").stat().st_size > 0
    with Project.open(folder) as p:
        p.add_annotator("ann-a")
        assert [a.name for a in p.annotators()] == ["lead", "ann-a"]
