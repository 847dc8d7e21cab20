"""Adding videos names its phases: the bar says when it copies and when it reads the videos."""

import pytest

from clipscribe import Project
from clipscribe.ui.dialogs.setup import PHASES, ProjectSetup, ingest


@pytest.fixture
def project_and_source(tmp_path, make_video):
    src = tmp_path / "shoot"
    for k in range(3):
        make_video(src / f"take-{k}.mp4", n=8, seed=k)
    with Project.create(tmp_path / "fresh") as p:
        yield p, src


def test_ingest_reports_copying_then_reading(project_and_source):
    p, src = project_and_source
    phases, steps = [], []
    folder, rep = ingest(p, src, None, cancel=None, phase=phases.append,
                         progress=lambda done, total: steps.append((phases[-1], done, total)))
    assert phases == ["copying", "reading"] and len(rep.added) == 3
    reading = [(d, t) for ph, d, t in steps if ph == "reading"]
    assert reading[0] == (0, 3) and reading[-1] == (3, 3)  # counted in videos, not bytes
    assert all(t > 3 for ph, d, t in steps if ph == "copying")  # counted in bytes
    again = []
    ingest(p, None, None, cancel=None, progress=lambda d, t: None, phase=again.append)
    assert again == ["reading"]  # nothing to copy: only the reading phase


def test_the_bar_shows_the_reading_phase(qtbot, project_and_source):
    p, src = project_and_source
    d = ProjectSetup(p, pick=lambda caption: str(src))
    qtbot.addWidget(d)
    seen = []
    d.phaseStarted.connect(seen.append)
    d.copy_in()
    qtbot.waitUntil(lambda: d.progress.isHidden(), timeout=30000)
    assert seen == ["copying", "reading"]
    assert d.progress.format() == PHASES["reading"]
    assert "Added 3 clip(s)" in d.video_note.text()
