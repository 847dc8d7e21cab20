"""The review desk and the agreement board fit laptop screens: nothing outside the window at
1366×768 and 1440×900 (the desk also at 1024×640), and the board's figures reachable whole
(scrolled, never cut)."""

import pytest
from PySide6.QtCore import QRect
from PySide6.QtWidgets import QPushButton, QScrollArea

SCREENS = [(1366, 768), (1440, 900)]


@pytest.mark.parametrize("width,height", [*SCREENS, (1024, 640)])
def test_review_desk_fits_with_nothing_outside(qtbot, window, fit_check, width, height):
    w, p = window()
    desk = w.review_desk.desk
    qtbot.waitUntil(lambda: desk.viewer.frame_number is not None, timeout=5000)
    assert fit_check(w, width, height, "review") == []
    settle = desk.settle
    scroll = settle.parentWidget().parentWidget()
    assert isinstance(scroll, QScrollArea)
    # the settle buttons and the comment box: inside the window, or reachable by scrolling
    for part in [settle.text, *settle.findChildren(QPushButton)]:
        scroll.ensureWidgetVisible(part)
        top_left = part.mapTo(w, part.rect().topLeft())
        assert w.rect().contains(QRect(top_left, part.size())), part
    for part in (w.statusBar(), w.save_state, desk.caption_view, desk.tracks, desk.queue_view):
        assert part.visibleRegion().boundingRect() == part.rect(), part
    readout = desk.transport.readout    # shortened to fit, never cut
    assert readout.fontMetrics().horizontalAdvance(readout.text()) <= readout.contentsRect().width()


@pytest.mark.parametrize("width,height", SCREENS)
def test_board_figures_are_never_cut(qtbot, window, fit_check, width, height):
    w, p = window(view="board")
    board = w.review_desk.board
    if board.data is None:
        with qtbot.waitSignal(board.loaded, timeout=30000):
            pass
    if board.cues is None:   # the cues panel fills later and changes its figures' sizes
        with qtbot.waitSignal(board.cuesLoaded, timeout=180_000):
            pass
    assert fit_check(w, width, height, "board") == []
    scroll = board.scroll
    assert scroll.horizontalScrollBar().maximum() == 0        # nothing cut at the right edge
    for name, fig in board.figs.items():
        assert fig.size() == fig.sizeHint(), name
        scroll.ensureWidgetVisible(fig, 0, 0)
        assert fig.visibleRegion().boundingRect() == fig.rect(), name  # whole once scrolled to
    conf = board.figs["confusion"]
    assert conf.scale >= 0.7                                   # shrunk a little at most
    assert conf.mapTo(scroll.viewport(), conf.rect().bottomRight()).x() < scroll.viewport().width()
