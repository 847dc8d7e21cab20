"""Skips in the review desk: shown with their reasons, never counted as a label."""

from __future__ import annotations

import pytest
from PySide6.QtCore import QSettings, Qt

from clipscribe import Project


@pytest.fixture
def skipped(sample_copy):
    """A copy of the sample where annotator-2 clicked "put down" on clip 3, then skipped it."""
    folder = sample_copy
    with Project.open(folder) as p:
        assert ("put down" == dict((a, lab) for _, a, lab in p.clip_labels(clip=3))["annotator-2"])
        p.set_clip_state(3, "annotator-2", "skipped", "hands hidden behind the shelf")
    return folder


def test_comparison_and_queue_show_the_skip_and_leave_its_label_out(skipped):
    with Project.open(skipped) as p:
        cmp = p.clip_comparison(3)
        assert cmp.skipped == {"annotator-2": "hands hidden behind the shelf"}
        assert "annotator-2" in cmp.annotators and "annotator-2" not in cmp.labels
        assert cmp.labels == {"annotator-1": "stack", "annotator-3": "put down"}
        row = next(r for r in p.review_queue(n_boot=20) if r.clip == 3)
        assert row.skipped == {"annotator-2": "hands hidden behind the shelf"}
        assert "annotator-2" not in row.labels
        # two labels left, "stack" and "put down": a 1-1 split, disagreement 1 - 1/2
        assert row.label_disagreement == pytest.approx(0.5)


def test_review_desk_shows_who_skipped_and_why(qtbot, skipped, tmp_path):
    from clipscribe.ui.app import application, open_window
    from clipscribe.ui.review.queue_model import COLUMNS
    application()
    with Project.open(skipped) as p:
        w = open_window(p, view="review", settings=QSettings(str(tmp_path / "w.ini"),
                                                             QSettings.Format.IniFormat))
        qtbot.addWidget(w)
        w.show()
        desk = w.review_desk.desk
        qtbot.waitUntil(lambda: desk.ranking is None and desk.report is not None, timeout=20000)
        desk.open_clip(3)
        qtbot.waitUntil(lambda: desk.cmp is not None and desk.cmp.clip.id == 3, timeout=5000)
        assert "skipped by annotator-2: hands hidden behind the shelf" in desk.title.text()
        votes = {b.text().split("  ", 1)[-1]: b for b in desk.settle._vote_buttons}
        button = votes["annotator-2: skipped (hands hidden behind the shelf)"]
        assert not button.isEnabled()
        model = desk.queue_model
        row = model.row_of(3)
        labels = model.data(model.index(row, COLUMNS.index("Labels")), Qt.ItemDataRole.DisplayRole)
        assert labels.endswith(" · 1 skipped")
        tip = model.data(model.index(row, 0), Qt.ItemDataRole.ToolTipRole)
        assert "annotator-2: skipped (hands hidden behind the shelf)" in tip
        desk.grab().save(str(tmp_path / "desk.png"))
        w.close()
