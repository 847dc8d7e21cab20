"""Skips in the review desk: shown with their reasons, never counted as a label."""

from __future__ import annotations

import pytest
from PySide6.QtCore import QSettings, Qt

from clipscribe import Project


def _split_clip(p: Project) -> tuple[int, dict[str, str]]:
    """A sample clip that all three annotators labelled, annotators 1 and 3 differently:
    (clip, the labels of annotators 1 and 3)."""
    by: dict[int, dict[str, str]] = {}
    for c, a, lab in p.clip_labels():
        by.setdefault(c, {})[a] = lab
    for c, v in sorted(by.items()):
        rest = {a: lab for a, lab in v.items() if a != "annotator-2"}
        if ("annotator-2" in v and set(rest) == {"annotator-1", "annotator-3"}
                and len(set(rest.values())) == 2):
            return c, rest
    raise AssertionError("no such clip in the sample")


@pytest.fixture
def skipped(sample_copy):
    """(A copy of the sample where annotator-2 labelled a clip, then skipped it; that clip;
    the labels of annotators 1 and 3 on it)."""
    folder = sample_copy
    with Project.open(folder) as p:
        clip, rest = _split_clip(p)
        p.set_clip_state(clip, "annotator-2", "skipped", "hands hidden behind the shelf")
    return folder, clip, rest


def test_comparison_and_queue_show_the_skip_and_leave_its_label_out(skipped):
    skipped, clip, rest = skipped
    with Project.open(skipped) as p:
        cmp = p.clip_comparison(clip)
        assert cmp.skipped == {"annotator-2": "hands hidden behind the shelf"}
        assert "annotator-2" in cmp.annotators and "annotator-2" not in cmp.labels
        assert cmp.labels == rest
        row = next(r for r in p.review_queue(n_boot=20) if r.clip == clip)
        assert row.skipped == {"annotator-2": "hands hidden behind the shelf"}
        assert "annotator-2" not in row.labels
        # two different labels left: a 1-1 split, disagreement 1 - 1/2
        assert row.label_disagreement == pytest.approx(0.5)


def test_review_desk_shows_who_skipped_and_why(qtbot, skipped, tmp_path):
    from clipscribe.ui.app import application, open_window
    from clipscribe.ui.review.queue_model import COLUMNS
    application()
    skipped, clip, _rest = skipped
    with Project.open(skipped) as p:
        w = open_window(p, view="review", settings=QSettings(str(tmp_path / "w.ini"),
                                                             QSettings.Format.IniFormat))
        qtbot.addWidget(w)
        w.show()
        desk = w.review_desk.desk
        qtbot.waitUntil(lambda: desk.ranking is None and desk.report is not None, timeout=20000)
        desk.open_clip(clip)
        qtbot.waitUntil(lambda: desk.cmp is not None and desk.cmp.clip.id == clip, timeout=5000)
        assert "skipped by annotator-2: hands hidden behind the shelf" in desk.title.text()
        votes = {b.text().split("  ", 1)[-1]: b for b in desk.settle._vote_buttons}
        button = votes["annotator-2: skipped (hands hidden behind the shelf)"]
        assert not button.isEnabled()
        model = desk.queue_model
        row = model.row_of(clip)
        labels = model.data(model.index(row, COLUMNS.index("Labels")), Qt.ItemDataRole.DisplayRole)
        assert labels.endswith(" · 1 skipped")
        tip = model.data(model.index(row, 0), Qt.ItemDataRole.ToolTipRole)
        assert "annotator-2: skipped (hands hidden behind the shelf)" in tip
        desk.grab().save(str(tmp_path / "desk.png"))
        w.close()
