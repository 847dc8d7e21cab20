"""The export dialog says how many clips lack a fingerprint, its check computes none, and
"Compute fingerprints" computes them on the worker pool with progress."""

import pytest

from clipscribe import Project
from clipscribe.ui.app import application
from clipscribe.ui.dialogs.export_dialog import ExportDialog

WAIT_MS = 15000


@pytest.fixture
def lead(sample):
    application()
    with Project.open(sample) as p:
        yield p


def _dialog(qtbot, project, tmp_path):
    dlg = ExportDialog(project)
    qtbot.addWidget(dlg)
    dlg.folder.setText(str(tmp_path / "out"))
    dlg.show()
    qtbot.waitUntil(lambda: dlg.missing is not None, timeout=WAIT_MS)
    return dlg


def test_complete_project_needs_no_button(qtbot, lead, tmp_path):
    dlg = _dialog(qtbot, lead, tmp_path)
    assert dlg.missing == 0 and not dlg.fp_btn.isVisible()
    assert "Every clip has a fingerprint" in dlg.fp_note.text()


def test_missing_fingerprints_are_counted_offered_and_computed(qtbot, lead, tmp_path,
                                                               make_video):
    for i in range(2):
        path = lead.media_root / "extra" / f"new-{i}.mp4"
        path.parent.mkdir(exist_ok=True)
        make_video(path, n=12, seed=50 + i)
        lead.set_clip_label(lead.add_clip(path, group="extra"), "annotator-1", "push")
    dlg = _dialog(qtbot, lead, tmp_path)
    assert dlg.missing == 2 and dlg.fp_btn.isVisible() and dlg.fp_btn.isEnabled()
    assert dlg.fp_note.text().startswith("2 clip(s) have no fingerprint")

    dlg.check_btn.click()
    qtbot.waitUntil(lambda: not dlg.busy, timeout=WAIT_MS)
    assert dlg.plan is not None, dlg.message.text()
    assert lead.missing_fingerprints() == 2  # the check computed nothing
    assert dlg.plan.leakage.counts().get("no-fingerprint") == 1

    steps, shown = [], dlg._progress
    dlg._progress = lambda name, d, t: (steps.append((name, d, t)), shown(name, d, t))
    dlg.fp_btn.click()
    assert dlg.busy and not dlg.check_btn.isEnabled() and dlg.cancel_btn.isEnabled()
    qtbot.waitUntil(lambda: not dlg.busy and dlg.missing == 0, timeout=WAIT_MS)
    assert lead.missing_fingerprints() == 0
    assert steps[-1] == ("Computing fingerprints", 2, 2)
    assert dlg.plan is None and "Check again" in dlg.message.text()  # the old check is stale
    assert not dlg.fp_btn.isVisible()
