"""Ingest defaults and warnings: the CLI groups clips by folder as the setup dialog does, and an
exact copy of a clip already present is added with a warning naming both files."""

from __future__ import annotations

import shutil
import warnings

import pytest

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.errors import DuplicateMediaWarning
from clipscribe.types import BY_FOLDER
from clipscribe.ui.dialogs.setup import GROUPINGS, ProjectSetup


@pytest.fixture
def folder(tmp_path, make_video):
    """A new project with two source folders of two takes each, and one loose clip."""
    d = tmp_path / "p"
    with Project.create(d) as p:
        root = p.media_root
    for c, cam in enumerate(("cam-a", "cam-b")):
        for k in range(2):
            make_video(root / cam / f"take-{k}.mp4", n=8, seed=10 * c + k)
    make_video(root / "loose.mp4", n=8, seed=99)
    return d


def test_cli_add_media_groups_by_folder_by_default(folder, capsys):
    assert main(["add-media", str(folder)]) == 0
    out = capsys.readouterr().out
    assert "groups now 2 (by folder)" in out
    with Project.open(folder) as p:
        groups = {c.path: c.group for c in p.clips()}
    assert groups == {"cam-a/take-0.mp4": "cam-a", "cam-a/take-1.mp4": "cam-a",
                      "cam-b/take-0.mp4": "cam-b", "cam-b/take-1.mp4": "cam-b",
                      "loose.mp4": None}


def test_cli_add_media_can_group_nothing(folder, capsys):
    assert main(["add-media", str(folder), "--group-by", "none"]) == 0
    assert "groups now 0 (none" in capsys.readouterr().out
    with Project.open(folder) as p:
        assert p.groups() == []


def test_cli_pattern_and_group_by_are_exclusive(folder, capsys):
    with pytest.raises(SystemExit) as exc:
        main(["add-media", str(folder), "--group-by", "none", "--group-pattern", "(?P<group>x)"])
    assert exc.value.code == 2


def test_the_setup_dialog_and_the_cli_group_the_same_way():
    assert BY_FOLDER in GROUPINGS.values()


def test_an_exact_copy_is_added_with_a_warning_naming_both_files(folder, capsys):
    with Project.open(folder) as p:
        shutil.copyfile(p.media_root / "cam-a" / "take-0.mp4", p.media_root / "cam-b" / "again.mp4")
    assert main(["add-media", str(folder)]) == 0
    out = capsys.readouterr().out
    assert ("warning: cam-b/again.mp4: same content (SHA-256) as cam-a/take-0.mp4, already in "
            "the project") in out
    assert out.count("warning:") == 1  # the other four files are all different


def test_add_media_reports_copies_of_clips_added_before(folder):
    with Project.open(folder) as p:
        first = p.add_media(p.media_root / "cam-a")
        assert first.duplicates == [] and first.warnings() == []
        shutil.copyfile(p.media_root / "cam-a" / "take-1.mp4", p.media_root / "cam-b" / "dup.mp4")
        rep = p.add_media(p.media_root)
        assert rep.duplicates == [("cam-b/dup.mp4", "cam-a/take-1.mp4")]
        assert len(rep.added) == 4  # a copy may be meant: added, not refused


def test_add_clip_warns_about_an_exact_copy(folder):
    with Project.open(folder) as p:
        shutil.copyfile(p.media_root / "loose.mp4", p.media_root / "loose-copy.mp4")
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            p.add_clip("loose.mp4")  # the first one: no warning
        with pytest.warns(DuplicateMediaWarning, match="loose-copy.mp4: same content .* as loose.mp4"):
            p.add_clip("loose-copy.mp4")


def test_setup_dialog_notes_exact_copies(qtbot, folder):
    with Project.open(folder) as p:
        shutil.copyfile(p.media_root / "loose.mp4", p.media_root / "cam-a" / "loose.mp4")
        d = ProjectSetup(p, pick=lambda caption: "")
        qtbot.addWidget(d)
        d._ingest(None)
        qtbot.waitUntil(lambda: d.progress.isHidden(), timeout=30000)
        text = d.video_note.text()
        assert "Added 6 clip(s)" in text
        assert "Exact copy: loose.mp4: same content (SHA-256) as cam-a/loose.mp4" in text
