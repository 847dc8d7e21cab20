"""The window's layout per view: quitting in the review view leaves the work view whole the next
time, the View menu's dock entries work, and switching views never widens the window off a
1366×768 screen."""

from PySide6.QtCore import QRect
from PySide6.QtWidgets import QApplication, QDockWidget

from clipscribe.ui.focus import FRAME, fit_window
from clipscribe.ui.workbench.main_window import WORK_STATE_KEY

LEAD = "root"


def _docks(w):
    return {d.objectName(): d for d in w.findChildren(QDockWidget)}


def _settle():
    for _ in range(5):
        QApplication.processEvents()


def _reopen(open_window, folder, view="work"):
    w, _ = open_window(folder, LEAD, view=view)
    _settle()
    return w


def test_quitting_in_the_review_view_leaves_the_work_view_whole(qtbot, sample, open_window):
    w = _reopen(open_window, sample, view="review")
    assert not any(d.isVisible() for d in _docks(w).values())
    w.close()
    w = _reopen(open_window, sample)
    docks = _docks(w)
    assert set(docks) == {"queueDock", "clipDock"}
    for d in docks.values():
        assert d.isVisible(), d.objectName()
        assert d.toggleViewAction().isEnabled(), d.objectName()
        assert d.toggleViewAction().isChecked(), d.objectName()


def test_the_view_menu_shows_a_dock_the_person_closed(qtbot, sample, open_window):
    w = _reopen(open_window, sample)
    queue = _docks(w)["queueDock"]
    queue.toggleViewAction().trigger()  # closed in the work view: the person's choice
    assert queue.isHidden()
    w.show_view("review")
    w.close()
    w = _reopen(open_window, sample)
    queue = _docks(w)["queueDock"]
    assert queue.isHidden() and _docks(w)["clipDock"].isVisible()
    assert queue.toggleViewAction().isEnabled()
    queue.toggleViewAction().trigger()
    assert queue.isVisible()


def test_dock_entries_are_off_in_the_review_view(qtbot, sample, open_window):
    w = _reopen(open_window, sample)
    w.show_view("review")
    _settle()
    assert not any(d.toggleViewAction().isEnabled() for d in _docks(w).values())
    w.show_view("work")
    _settle()
    assert all(d.toggleViewAction().isEnabled() and d.isVisible() for d in _docks(w).values())


def test_a_saved_layout_with_every_dock_hidden_is_not_restored(qtbot, sample, open_window, settings):
    w = _reopen(open_window, sample)
    for d in _docks(w).values():
        d.hide()
    settings.setValue(WORK_STATE_KEY, w.saveState())
    settings.setValue("window/state", w.saveState())  # as the review view once left it
    w.settle_conflicts = lambda: True
    w.hide()
    w = _reopen(open_window, sample)
    assert all(d.isVisible() for d in _docks(w).values())


def test_switching_views_keeps_the_window_on_a_1366_by_768_screen(qtbot, sample, open_window):
    avail = QRect(0, 0, 1366, 768 - 32)
    w = _reopen(open_window, sample)
    fit_window(w, avail)
    _settle()
    work_size = w.size()
    widths = []
    for view in ("review", "work", "board", "work"):
        w.show_view(view)
        _settle()
        widths.append(w.width())
        assert w.width() + FRAME[0] <= avail.width(), (view, w.width())
        assert w.height() + FRAME[1] <= avail.height(), (view, w.height())
    assert w.size() == work_size
    docks = _docks(w)
    assert all(d.isVisible() and d.width() > 200 for d in docks.values())
