"""The review desk ranks by how certain the inferred label is, and shows the posterior of each
annotator's answer beside it."""

import math

import pytest
from PySide6.QtCore import Qt

from clipscribe import Project, RecordError
from clipscribe.ui.review.queue_model import COLUMNS


def test_least_certain_ranking_orders_by_the_inferred_posterior(sample):
    with Project.open(sample[0], user=sample[1]) as p:
        report = p.agreement_report(n_boot=1)
        inf = report.reliability.inferred
        disputed = p.review_queue(report=report)
        rows = p.review_queue(report=report, rank_by="least-certain")
        assert sorted(r.clip for r in rows) == sorted(r.clip for r in disputed)
        assert [r.rank for r in rows] == list(range(1, len(rows) + 1))
        known = [r for r in rows if not math.isnan(r.certainty)]
        assert known and all(r.inferred_label == inf.labels[r.clip] for r in known)
        assert all(r.certainty == pytest.approx(max(inf.posterior[r.clip].values()))
                   for r in known)
        certs = [r.certainty for r in known]
        assert certs == sorted(certs) and certs[0] < certs[-1]
        assert rows[:len(known)] == known   # clips with nothing inferred come last
        # the default order is unchanged, and carries the inferred label too
        assert [r.clip for r in disputed] == [r.clip for r in p.review_queue(report=report)]
        assert {r.clip: r.inferred_label for r in disputed} == {r.clip: r.inferred_label
                                                                 for r in rows}
        with pytest.raises(RecordError, match="rank by 'nope'"):
            p.review_queue(report=report, rank_by="nope")


def test_desk_ranks_least_certain_first_and_shows_posteriors_beside_answers(qtbot, window,
                                                                           tmp_path):
    w, p = window()
    desk = w.review_desk.desk
    with qtbot.waitSignal(desk.ranked, timeout=20000):
        desk.rank_by.setCurrentIndex(desk.rank_by.findData("least-certain"))
    qtbot.waitUntil(lambda: desk.ranking is None, timeout=20000)
    m = desk.queue_model
    certs = [m.row(i).certainty for i in range(m.rowCount()) if not math.isnan(m.row(i).certainty)]
    assert len(certs) > 1 and certs == sorted(certs)
    assert "least certain first" in desk.queue_note.text()
    top = m.row(0)
    shown = m.data(m.index(0, COLUMNS.index("Inferred")), Qt.ItemDataRole.DisplayRole)
    assert shown == f"{top.inferred_label} {top.certainty:.2f}"
    desk.open_clip(top.clip)
    qtbot.waitUntil(lambda: desk.cmp is not None and desk.cmp.clip.id == top.clip, timeout=5000)
    post = desk.report.reliability.inferred.posterior[top.clip]
    assert desk.cmp.posterior == pytest.approx({str(k): v for k, v in post.items()})
    odds = {b.text().split("  ", 1)[-1].split(":")[0]: o.text()
            for b, o in zip(desk.settle._vote_buttons, desk.settle._vote_odds)}
    answered = {a: lab for a, lab in desk.cmp.labels.items()}
    assert answered and all(odds[a] == f"{post[lab]:.2f}" for a, lab in answered.items())
    w.resize(1366, 768)
    desk.grab().save(str(tmp_path / "least_certain.png"))


def test_desk_marks_a_settled_clip_as_check_clip(qtbot, window):
    w, p = window()
    desk = w.review_desk.desk
    box = desk.settle.check_box
    clip = desk.cmp.clip.id
    if desk.cmp.gold_label is None:
        assert not box.isEnabled()       # nothing to take as the known answer yet
        desk.editor.settle_label(desk.labels[0])
    assert box.isEnabled() and not box.isChecked()
    gold = p.gold_labels()[clip]
    qtbot.mouseClick(box, Qt.MouseButton.LeftButton)
    assert p.check_clips() == {clip: gold} and box.isChecked() and gold in box.text()
    qtbot.mouseClick(box, Qt.MouseButton.LeftButton)
    assert p.check_clips() == {} and not box.isChecked()
