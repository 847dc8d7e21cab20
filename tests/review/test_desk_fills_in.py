"""The review desk and the board open at once and fill in as results arrive: the agreement
report is held on its worker thread while the test looks; a superseded result is dropped; the
disputed queue reads its rows a page at a time."""

import threading

import pytest
from PySide6.QtCore import QSettings
from PySide6.QtTest import QAbstractItemModelTester

from clipscribe import Project

WAIT = 20000


@pytest.fixture
def held_report(monkeypatch, sample):
    """Project.agreement_report waits for the returned event (on whatever thread calls it).
    The sample's caption part is kept first, so the board asks for one report (with the
    captions changed it shows a label-only report first: see the test of that case)."""
    folder, lead = sample
    with Project.open(folder, user=lead) as p:
        p.agreement_report()
    gate, calls = threading.Event(), []
    real = Project.agreement_report

    def held(self, *a, **kw):
        calls.append(threading.current_thread())
        gate.wait(timeout=15)
        return real(self, *a, **kw)

    monkeypatch.setattr(Project, "agreement_report", held)
    yield gate, calls
    gate.set()


def _drawn(board, name):
    """The panel holds a figure of its numbers (an empty one has no title)."""
    texts = [t.text for t in board.figs[name].fig.items if type(t).__name__ == "Text"]
    return bool(board.figs[name].fig.title) and not any("Waiting for" in t for t in texts)


def _open(qtbot, open_window, sample, tmp_path, view):
    folder, lead = sample
    return open_window(folder, lead, view=view,
                       settings=QSettings(str(tmp_path / "w.ini"), QSettings.Format.IniFormat))


def _usable_desk(qtbot, open_window, sample, tmp_path):
    """(window, project, desk) once the desk is usable (the report may still be held)."""
    w, p = _open(qtbot, open_window, sample, tmp_path, "review")
    desk = w.review_desk.desk
    with qtbot.waitSignal(desk.usable, timeout=WAIT):
        pass
    return w, p, desk


def test_desk_is_usable_on_a_provisional_order_before_the_report(qtbot, open_window, sample,
                                                                 tmp_path, held_report):
    gate, calls = held_report
    w, p, desk = _usable_desk(qtbot, open_window, sample, tmp_path)
    assert calls and threading.main_thread() not in calls        # the report: off the UI thread
    assert desk.ranking is not None and desk.report is None       # ... and still held
    m = desk.queue_model
    assert m.order.provisional and m.rowCount() == m.total == len(p.clips())
    assert desk.cmp is not None and desk.cmp.clip.id == m.clip_at(0)
    assert desk.viewer.frame_number is not None
    assert "Provisional order by label disagreement" in desk.queue_note.text()
    seg_f1 = m.row(0).segment_f1
    assert seg_f1 != seg_f1                                       # NaN: not measured yet
    with qtbot.waitSignal(desk.ready, timeout=WAIT):
        gate.set()
    assert desk.report is not None and not m.order.provisional
    assert m.clips() == [r.clip for r in p.review_queue(report=desk.report)]
    assert desk.cmp.clip.id == m.clip_at(0)                       # nobody chose a clip: the top
    assert "Provisional" not in desk.queue_note.text()


def test_a_clip_the_lead_chose_stays_open_when_the_order_arrives(qtbot, open_window, sample,
                                                                 tmp_path, held_report):
    gate, _ = held_report
    w, p, desk = _usable_desk(qtbot, open_window, sample, tmp_path)
    chosen = desk.queue_model.clip_at(5)
    desk.queue_view.selectRow(5)                                  # as a click on the row
    assert desk.cmp.clip.id == chosen
    with qtbot.waitSignal(desk.ranked, timeout=WAIT):
        gate.set()
    assert desk.cmp.clip.id == chosen
    assert desk.queue_view.currentIndex().row() == desk.queue_model.row_of(chosen)


def test_a_superseded_ranking_is_dropped(qtbot, open_window, sample, tmp_path, held_report):
    gate, _ = held_report
    w, p, desk = _usable_desk(qtbot, open_window, sample, tmp_path)
    old = desk.ranking
    desk.by_group.setCurrentIndex(desk.by_group.findData("cell-east"))  # a newer request
    assert old.cancel_event.is_set() and desk.ranking is not old
    with qtbot.waitSignal(desk.provisional, timeout=WAIT):
        pass
    shown = desk.queue_model.clips()
    assert len(shown) == 3
    everything = p.review_order()
    old.signals.partial.emit((None, everything, p.review_rows(everything, 0, 20), {}))
    assert desk.queue_model.clips() == shown                      # the old result: dropped
    with qtbot.waitSignal(desk.ranked, timeout=WAIT):
        gate.set()
    assert desk.queue_model.clips() == [r.clip for r in p.review_queue(group="cell-east")]


def test_board_fills_its_cheap_panels_before_the_report(qtbot, open_window, sample, tmp_path,
                                                        held_report):
    gate, _ = held_report
    w, p = _open(qtbot, open_window, sample, tmp_path, "board")
    board = w.review_desk.board
    qtbot.waitUntil(lambda: _drawn(board, "trend"), timeout=WAIT)
    assert _drawn(board, "throughput") and "Throughput" in board.figs["throughput"].fig.title
    assert board.data is None and not _drawn(board, "label_alpha")  # agreement: held
    assert board.stop_button.isVisible() and board.progress.value() >= 2
    assert "computing agreement" in board.summary.text()
    first = board.job
    second = board.refresh()                                      # Recompute meanwhile
    assert first.cancel_event.is_set() and board.job is second
    first.signals.finished.emit({"bogus": True})                  # a stale result: dropped
    assert board.data is None
    with qtbot.waitSignal(board.loaded, timeout=WAIT):
        gate.set()
    assert board.data is not None and "bogus" not in board.data
    assert _drawn(board, "label_alpha") and not board.stop_button.isVisible()
    assert "Krippendorff alpha" in board.summary.text()


def test_board_stop_keeps_what_is_shown(qtbot, open_window, sample, tmp_path, held_report):
    gate, _ = held_report
    w, p = _open(qtbot, open_window, sample, tmp_path, "board")
    board = w.review_desk.board
    qtbot.waitUntil(lambda: _drawn(board, "throughput"), timeout=WAIT)
    job = board.job
    board.stop()
    assert job.cancel_event.is_set() and board.job is None and "Stopped" in board.summary.text()
    assert board.refresh_button.isEnabled() and _drawn(board, "throughput")
    gate.set()
    qtbot.waitUntil(lambda: board.runner.pool.activeThreadCount() == 0, timeout=WAIT)
    assert board.data is None and "Stopped" in board.summary.text()


def test_queue_reads_its_rows_a_page_at_a_time(qtbot, sample, monkeypatch):
    from PySide6.QtWidgets import QTableView

    import clipscribe.ui.review.queue_model as queue_module
    from clipscribe.ui.app import application
    from clipscribe.ui.review.queue_model import DisputedClipsModel
    monkeypatch.setattr(queue_module, "PAGE", 5)
    application()
    folder, lead = sample
    with Project.open(folder, user=lead) as p:
        rep = p.agreement_report(n_boot=1)
        order = p.review_order(report=rep)
        want = p.review_queue(report=rep)
        m = DisputedClipsModel(None, p)
        QAbstractItemModelTester(m, QAbstractItemModelTester.FailureReportingMode.Fatal)
        m.set_order(order, p.review_queue(report=rep, order=order, limit=5), rep)
        view = QTableView()
        qtbot.addWidget(view)
        view.setModel(m)
        view.resize(400, 90)                                      # room for a few rows
        view.show()
        qtbot.waitExposed(view)
        assert m.total == 12 and m.rowCount() == 5 and m.pages_read == 1 and m.canFetchMore()
        assert [m.row(i) for i in range(5)] == want[:5]
        view.scrollToBottom()                                     # the view asks for more
        qtbot.waitUntil(lambda: m.rowCount() == 10, timeout=5000)
        assert m.rowCount() < m.total
        assert m.row_of(want[-1].clip) == 11 and m.rowCount() == 12   # a jump adds the rest
        assert [m.row(i) for i in range(12)] == want and m.pages_read == 3
        assert m.clip_at(7) == want[7].clip and m.row_of(-1) is None


def test_desk_steps_across_a_page_boundary(qtbot, open_window, sample, tmp_path, monkeypatch):
    import clipscribe.ui.review.desk as desk_module
    import clipscribe.ui.review.queue_model as queue_module
    monkeypatch.setattr(queue_module, "PAGE", 5)
    monkeypatch.setattr(desk_module, "PAGE", 5)
    w, p = _open(qtbot, open_window, sample, tmp_path, "review")
    desk = w.review_desk.desk
    with qtbot.waitSignal(desk.ready, timeout=WAIT):
        pass
    want = [r.clip for r in p.review_queue(report=desk.report)]
    assert desk.queue_model.clips() == want
    desk.open_clip(want[4])
    desk.step(1)
    assert desk.cmp.clip.id == want[5] and desk.queue_view.currentIndex().row() == 5


def test_opened_on_the_board_the_desk_ranks_after_it(qtbot, open_window, sample, tmp_path,
                                                      held_report):
    """The window opened on the board: the desk shows its provisional order but computes no
    agreement report of its own until the board's numbers are in (one report at a time)."""
    gate, calls = held_report
    w, p = _open(qtbot, open_window, sample, tmp_path, "board")
    board, desk = w.review_desk.board, w.review_desk.desk
    qtbot.waitUntil(lambda: _drawn(board, "trend") and desk.queue_model.rowCount() > 0,
                    timeout=WAIT)
    qtbot.wait(300)
    assert len(calls) == 1 and desk.report is None                # the board's report alone
    assert desk.queue_model.order.provisional
    with qtbot.waitSignal(desk.ranked, timeout=WAIT):
        gate.set()                                                # board loaded, then the desk
    assert board.data is not None and desk.report is not None and len(calls) == 2


def test_switching_to_the_desk_lets_it_rank_at_once(qtbot, open_window, sample, tmp_path,
                                                    held_report):
    gate, calls = held_report
    w, p = _open(qtbot, open_window, sample, tmp_path, "board")
    page = w.review_desk
    qtbot.waitUntil(lambda: len(calls) == 1, timeout=WAIT)
    page.setCurrentWidget(page.desk)
    qtbot.waitUntil(lambda: len(calls) == 2, timeout=WAIT)        # the board is still held
    assert page.board.data is None
    gate.set()


def test_with_the_captions_changed_the_board_shows_the_label_numbers_first(
        qtbot, open_window, sample, tmp_path, monkeypatch):
    """The caption part is not kept (a fresh project, or the captions changed): it takes
    about a minute at 100k clips, so the label numbers are drawn from a report without
    captions while it is computed, and the caption panels say what they wait for."""
    from clipscribe.project import analysis
    gate, real = threading.Event(), analysis.caption_part

    def held(*a, **kw):
        gate.wait(timeout=15)
        return real(*a, **kw)
    monkeypatch.setattr(analysis, "caption_part", held)
    w, p = _open(qtbot, open_window, sample, tmp_path, "board")
    assert not p.caption_part_kept()
    board = w.review_desk.board
    qtbot.waitUntil(lambda: _drawn(board, "label_alpha"), timeout=WAIT)
    assert board.data is None and _drawn(board, "pairwise") and _drawn(board, "confusion")
    waiting = [t.text for t in board.figs["caption_bleu"].fig.items if type(t).__name__ == "Text"]
    assert any("captions changed" in t for t in waiting)
    assert "computing caption consensus" in board.summary.text()
    with qtbot.waitSignal(board.loaded, timeout=WAIT):
        gate.set()
    assert _drawn(board, "caption_bleu") and "Krippendorff alpha" in board.summary.text()
    assert p.caption_part_kept()


def test_panels_without_a_figure_yet_are_not_drawn_as_empty_boxes(qtbot, open_window, sample,
                                                                  tmp_path, held_report):
    gate, _ = held_report
    w, p = _open(qtbot, open_window, sample, tmp_path, "board")
    board = w.review_desk.board
    qtbot.waitUntil(lambda: _drawn(board, "throughput"), timeout=WAIT)
    cues = ["cue_accuracy", "cue_f1", "cue_labels", "cue_accepted"]
    assert not any(board.figs[n].isVisible() for n in cues)     # they wait for the board
    assert board.figs["label_alpha"].isVisible()                 # "waiting for the numbers"
    with qtbot.waitSignal(board.cuesLoaded, timeout=60000):
        gate.set()
    assert all(board.figs[n].isVisible() == bool(board.figs[n].fig.title) for n in cues)
    assert board.figs["cue_accuracy"].isVisible()
