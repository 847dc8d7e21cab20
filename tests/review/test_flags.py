"""Skips and unsure flags reach the lead: the review desk's filter and labels, the board and
the written report."""

from __future__ import annotations

from PySide6.QtCore import Qt

from clipscribe import Project
from clipscribe.review_report import board_data, write_report
from clipscribe.ui.review.queue_model import COLUMNS

LABELS = COLUMNS.index("Labels")


def _flag(folder):
    """ann: annotator-1 skips the first clip, annotator-2 flags the second unsure."""
    with Project.open(folder) as p:
        a, b = p.clips()[:2]
        p.set_clip_state(a.id, "annotator-1", "skipped", "camera pointed at the wall")
        p.set_clip_state(b.id, "annotator-2", "unsure", "stack or sort?")
        return a.id, b.id


def test_desk_filter_keeps_skipped_and_unsure_clips_and_names_who_and_why(qtbot, sample, window):
    skipped, unsure = _flag(sample[0])
    w, p = window()
    desk = w.review_desk.desk
    box = desk.by_flag
    box.setCurrentIndex(box.findData(True))
    qtbot.waitUntil(lambda: desk.ranking is None and desk.queue_model.rowCount() > 0, timeout=20000)
    shown = [desk.queue_model.row(i).clip for i in range(desk.queue_model.rowCount())]
    assert sorted(shown) == sorted({skipped, unsure} | {c for c, *_ in p.skips()}
                                   | {c for c, *_ in p.unsure_flags()})
    i = shown.index(unsure)
    assert "1 unsure" in desk.queue_model.index(i, LABELS).data()
    assert "annotator-2: unsure (stack or sort?)" in desk.queue_model.index(i, LABELS).data(
        Qt.ItemDataRole.ToolTipRole)
    desk.open_clip(unsure)
    qtbot.waitUntil(lambda: desk.cmp is not None and desk.cmp.clip.id == unsure, timeout=5000)
    assert "unsure: annotator-2 (stack or sort?)" in desk.title.text()
    votes = [b.text() for b in desk.settle._vote_buttons]
    assert any("annotator-2" in t and "(unsure: stack or sort?)" in t for t in votes)


def test_board_and_report_list_skips_and_unsure_flags(sample, tmp_path):
    skipped, unsure = _flag(sample[0])
    with Project.open(sample[0], user=sample[1]) as p:
        data = board_data(p, n_boot=20)
        flags = {(f["clip"], f["annotator"], f["state"], f["reason"]) for f in data["flags"]}
        assert (skipped, "annotator-1", "skipped", "camera pointed at the wall") in flags
        assert (unsure, "annotator-2", "unsure", "stack or sort?") in flags
        files = write_report(p, tmp_path / "rep", n_boot=20)
    html = files.html.read_text()
    assert "Skipped and unsure clips" in html and "stack or sort?" in html
    csv_text = (tmp_path / "rep" / "skipped_unsure.csv").read_text()
    assert "camera pointed at the wall" in csv_text
