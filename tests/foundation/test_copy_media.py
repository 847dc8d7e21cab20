"""Copying a folder of videos from outside into the media root: all or nothing."""

import threading

import pytest

from clipscribe import Project, RecordError
from clipscribe.cli import main
from clipscribe.media import JobCancelled
from clipscribe.media import copy_in

BY_FOLDER = r"^(?P<group>.+)/[^/]+$"


@pytest.fixture
def shoot(tmp_path, make_video):
    """A folder outside any project: two cameras' takes, a note and a hidden video."""
    src = tmp_path / "shoot-1"
    make_video(src / "cam-a" / "take-1.mp4", seed=1)
    make_video(src / "cam-a" / "take-2.mp4", seed=2)
    make_video(src / "cam-b" / "take-1.MOV", seed=3)
    (src / "notes.txt").write_text("not a video")
    make_video(src / ".trash" / "old.mp4", seed=4)
    return src


def test_copies_the_videos_keeping_folders_and_they_can_be_added(project, shoot):
    dest = project.copy_media_in(shoot)
    assert dest == project.media_root / "shoot-1"
    got = sorted(p.relative_to(dest).as_posix() for p in dest.rglob("*") if p.is_file())
    assert got == ["cam-a/take-1.mp4", "cam-a/take-2.mp4", "cam-b/take-1.MOV"]
    assert (dest / "cam-a" / "take-1.mp4").read_bytes() == (shoot / "cam-a" / "take-1.mp4").read_bytes()
    rep = project.add_media(dest, group_pattern=BY_FOLDER)
    assert len(rep.added) == 3 and not rep.skipped
    assert {c.group for c in project.clips()} >= {"shoot-1/cam-a", "shoot-1/cam-b"}
    again = project.copy_media_in(shoot)            # copying again resumes in the same folder
    assert again == project.media_root / "shoot-1"
    assert project.add_media(again).added == []     # and adds no clip twice
    (shoot / "cam-a" / "take-1.mp4").write_bytes(b"another take")
    other = project.copy_media_in(shoot)            # a changed source goes next to the first
    assert other == project.media_root / "shoot-1-2"


def test_progress_is_in_bytes_and_ends_at_the_total(project, shoot, monkeypatch):
    monkeypatch.setattr(copy_in, "CHUNK", 1000)
    seen = []
    project.copy_media_in(shoot, progress=lambda done, total: seen.append((done, total)))
    total = sum(p.stat().st_size for p in copy_in.video_files(shoot))
    assert seen[-1] == (total, total) and len(seen) > 3
    assert all(a[0] <= b[0] for a, b in zip(seen, seen[1:]))


def test_a_cancel_midway_leaves_nothing(project, shoot, monkeypatch):
    monkeypatch.setattr(copy_in, "CHUNK", 1000)
    stop = threading.Event()
    with pytest.raises(JobCancelled):
        project.copy_media_in(shoot, cancel=stop, progress=lambda done, total: stop.set())
    assert not (project.media_root / "shoot-1").exists()
    assert not list(project.media_root.rglob("*.part"))


def test_an_error_midway_leaves_nothing(project, shoot, monkeypatch):
    calls = []

    def failing_copystat(src, dst):
        calls.append(src)
        if len(calls) == 2:
            raise OSError(28, "No space left on device")
    monkeypatch.setattr(copy_in.shutil, "copystat", failing_copystat)
    with pytest.raises(RecordError, match="No space left"):
        project.copy_media_in(shoot)
    assert not (project.media_root / "shoot-1").exists()


def test_refuses_a_folder_inside_the_media_root_or_without_videos(project, tmp_path):
    with pytest.raises(RecordError, match="already inside the media root"):
        project.copy_media_in(project.media_root / "g1")
    empty = tmp_path / "empty"
    empty.mkdir()
    with pytest.raises(RecordError, match="no video files"):
        project.copy_media_in(empty)
    with pytest.raises(RecordError, match="not a folder"):
        project.copy_media_in(tmp_path / "missing")


def test_cli_add_media_copy_from(project, shoot, capsys):
    folder = project.folder
    project.close()
    assert main(["add-media", str(folder), "--copy-from", str(shoot),
                 "--group-pattern", BY_FOLDER]) == 0
    out = capsys.readouterr().out
    assert "copied into" in out and "added 3 clip(s)" in out
    with Project.open(folder) as p:
        assert len(p.clips()) == 6
    capsys.readouterr()
    # FOLDER and --copy-from together is a usage error: exit 2, one line, nothing copied
    assert main(["add-media", str(folder), "x", "--copy-from", str(shoot)]) == 2
    assert capsys.readouterr().err == "clipscribe: error: give either FOLDER or --copy-from, not both\n"
    with Project.open(folder) as p:
        assert len(p.clips()) == 6
