"""The review page is built on the first switch to it, and its queue is ranked on the worker
pool: the window never waits for the agreement report."""

import threading

from PySide6.QtWidgets import QMenu

from clipscribe import Project


def _menus(w):
    return [a.text() for a in w.menuBar().actions()]


def test_page_is_built_on_first_switch_and_shows_the_ranking_state(qtbot, window):
    w, p = window(view="work")
    assert w.review_desk is None and "&Review" not in _menus(w)   # nothing built yet
    w.show_view("review")
    desk = w.review_desk.desk
    assert "&Review" in _menus(w)
    # the ranking's result arrives through the event loop, so this is what shows first
    assert desk.queue_note.text() == "Ranking disputed clips…"
    assert desk.queue_model.rowCount() == 0 and desk.cmp is None
    with qtbot.waitSignal(desk.ready, timeout=20000):
        pass
    assert desk.cmp.clip.id == p.most_disputed_clip()
    assert desk.queue_model.row(0).clip == p.most_disputed_clip()
    assert "settled" in desk.queue_note.text()
    w.show_view("work")
    w.show_view("review")
    assert w.review_desk.desk is desk                             # built once
    assert len([m for m in w.menuBar().findChildren(QMenu) if m.title() == "&Review"]) == 1


def test_ranking_runs_off_the_ui_thread(qtbot, window, monkeypatch):
    gate, threads = threading.Event(), []
    real = Project.review_queue

    def held(self, *a, **kw):
        threads.append(threading.current_thread())
        gate.wait(timeout=10)  # held until the test has looked at the window
        return real(self, *a, **kw)

    monkeypatch.setattr(Project, "review_queue", held)
    w, p = window(view="work")
    w.show_view("review")                     # returns while the ranking is held
    desk = w.review_desk.desk
    qtbot.waitUntil(lambda: bool(threads), timeout=10000)
    assert threads[0] is not threading.main_thread()
    assert desk.ranking is not None and desk.queue_model.rowCount() == 0
    assert desk.title.text() == "Ranking disputed clips…"
    qtbot.wait(50)                            # the UI thread keeps serving events meanwhile
    assert desk.queue_model.rowCount() == 0
    with qtbot.waitSignal(desk.ranked, timeout=20000) as got:
        gate.set()
    assert got.args == [desk.queue_model.rowCount()] and desk.queue_model.rowCount() > 0


def test_a_newer_ranking_supersedes_an_older_one(qtbot, window):
    w, p = window()
    desk = w.review_desk.desk
    label = desk.cmp.labels[desk.cmp.annotators[0]]
    first = desk.reload_queue()
    desk.by_label.setCurrentIndex(desk.by_label.findData(label))   # starts a second ranking
    assert first.cancel_event.is_set() and desk.ranking is not first
    with qtbot.waitSignal(desk.ranked, timeout=20000):
        pass
    want = [r.clip for r in p.review_queue(label=label)]
    assert desk.queue_model.clips() == want
