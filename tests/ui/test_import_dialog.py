"""The import dialog: the import runs on the worker pool with a progress bar, the window stays
responsive meanwhile, Cancel before the write imports nothing, Cancel greys out once the write
has begun, and a refused file says why with nothing imported."""

import json
import threading

import pytest

from clipscribe import Project
from clipscribe.ui.app import application
from clipscribe.ui.dialogs.import_dialog import ImportDialog, summary

WAIT_MS = 20000


@pytest.fixture
def project(sample):
    application()
    with Project.open(sample, user="annotator-3") as p:  # an annotator imports her own work
        yield p


def _captions_file(p: Project, path, n: int):
    clips = [c.id for c in p.clips()]
    path.write_text("".join(json.dumps({"type": "caption", "clip": str(clips[i % len(clips)]),
                                        "annotator": "annotator-3",
                                        "text": f"a hand moves block number {i}"}) + "\n"
                            for i in range(n)))
    return path


class Gate:
    """Holds the import on its worker thread until released (so a test can act while it runs)."""

    def __init__(self, p: Project) -> None:
        self.entered, self.release = threading.Event(), threading.Event()
        self.real = p.import_records

    def __call__(self, path, *, progress=None, cancel=None):
        self.entered.set()
        assert self.release.wait(WAIT_MS / 1000)
        return self.real(path, progress=progress, cancel=cancel)


def _mine(p: Project) -> int:
    return len(p.caption_rows(annotator="annotator-3"))


def _held(qtbot, p: Project, path):
    """A shown dialog whose import has started and is held on its worker thread."""
    gate = Gate(p)
    p.import_records = gate
    dlg = ImportDialog(p, path)
    qtbot.addWidget(dlg)
    dlg.show()
    job = dlg.start()
    assert gate.entered.wait(WAIT_MS / 1000)
    return dlg, job, gate


def test_import_runs_in_the_background_with_progress_and_reports_counts(qtbot, project, tmp_path):
    p = project
    before = _mine(p)
    dlg, job, gate = _held(qtbot, p, _captions_file(p, tmp_path / "caps.jsonl", 2500))
    seen = []
    job.signals.progress.connect(lambda d, t: seen.append((d, t)))  # nothing sent while held
    # the worker is held: the UI thread still runs events and shows the dialog
    qtbot.wait(50)
    assert dlg.isVisible() and dlg.running and dlg.cancel_button.isEnabled()
    assert not dlg.close_button.isVisible()  # Close only once the import has ended
    gate.release.set()
    qtbot.waitUntil(lambda: not dlg.running, timeout=WAIT_MS)
    assert dlg.imported is not None and dlg.imported["caption"] == 2500
    assert dlg.status.text() == "Imported 2,500 captions."
    assert dlg.close_button.isVisible() and not dlg.cancel_button.isVisible()
    assert _mine(p) == before + 2500
    totals = {t for _, t in seen}
    assert totals == {5000} and seen[-1] == (5000, 5000)  # checked, then written
    assert any(d <= 2500 for d, _ in seen) and any(d > 2500 for d, _ in seen)


def test_cancel_before_the_write_imports_nothing(qtbot, project, tmp_path):
    p = project
    before = _mine(p)
    dlg, _job, gate = _held(qtbot, p, _captions_file(p, tmp_path / "caps.jsonl", 50))
    dlg.cancel_button.click()
    assert dlg.status.text() == "Cancelling…"
    gate.release.set()
    qtbot.waitUntil(lambda: not dlg.running, timeout=WAIT_MS)
    assert dlg.status.text() == "Cancelled: nothing was imported."
    assert dlg.imported is None and _mine(p) == before


def test_cancel_greys_out_once_the_write_has_begun(qtbot, project, tmp_path):
    dlg = ImportDialog(project, tmp_path / "any.jsonl")
    qtbot.addWidget(dlg)
    dlg._progress(400, 1000)
    assert dlg.cancel_button.isEnabled() and dlg.status.text() == "Checking records: 400 of 500…"
    dlg._progress(600, 1000)
    assert not dlg.cancel_button.isEnabled()
    assert dlg.status.text() == "Writing records: 100 of 500…"


def test_a_refused_file_says_why_and_imports_nothing(qtbot, project, tmp_path):
    p = project
    before = _mine(p)
    bad = tmp_path / "bad.jsonl"
    bad.write_text(json.dumps({"type": "caption", "clip": "1", "annotator": "annotator-3",
                               "text": "fine"}) + "\n"
                   + json.dumps({"type": "caption", "clip": "no-such-clip.mp4",
                                 "annotator": "annotator-3", "text": "bad"}) + "\n")
    dlg = ImportDialog(p, bad)
    qtbot.addWidget(dlg)
    dlg.show()
    dlg.start()
    qtbot.waitUntil(lambda: not dlg.running, timeout=WAIT_MS)
    text = dlg.status.text()
    assert text.startswith("Nothing was imported: ") and "bad.jsonl:2" in text, text
    assert dlg.imported is None and _mine(p) == before


def test_summary_wording():
    assert summary({"label": 1, "caption": 0, "duplicate": 0}) == "Imported 1 label."
    assert summary({"label": 0, "duplicate": 2}) == ("Nothing new to import. 2 repeated records "
                                                    "in the file taken once.")
