"""Screenshot mode renders the review desk (and the board helper renders the board)."""

import subprocess
import sys

import pytest
from PySide6.QtCore import Qt
from PySide6.QtGui import QImage


def _run(code, *args):
    return subprocess.run([sys.executable, "-c", code, *map(str, args)], capture_output=True,
                          text=True, timeout=90)


@pytest.mark.parametrize("view", ["review", "board"])  # the board waits for its numbers
def test_open_view_screenshot(sample, tmp_path, view):
    folder, _ = sample
    out = tmp_path / f"{view}.png"
    run = _run("import sys; from clipscribe.cli import main; "
               "sys.exit(main(['open', sys.argv[1], '--view', sys.argv[3], '--screenshot', sys.argv[2]]))",
               folder, out, view)
    assert run.returncode == 0, run.stderr
    image = QImage(str(out))
    assert not image.isNull() and image.width() >= 1280 and image.height() >= 800


def test_desk_and_board_widgets_draw(qtbot, window):
    w, p = window()
    page = w.review_desk
    desk = page.desk
    qtbot.waitUntil(lambda: desk.viewer.frame_number is not None, timeout=5000)
    # the desk's picture is the most disputed clip, with the gold track drawn
    assert str(desk.cmp.clip.id) in desk.title.text()
    page.show_board()
    with qtbot.waitSignal(page.board.loaded, timeout=20000):
        pass
    figs = page.board.figs
    assert all(v.fig.items for v in figs.values())
    tips = figs["pairwise"].all_tips()
    assert any("Cohen kappa annotator-1 vs annotator-2" in t and "recipe: kappa|cohen" in t
               for t in tips)
    assert "recipe: alpha|krippendorff" in page.board.details.toPlainText()
    figs["pairwise"].setFocus()  # keyboard path: a focused figure lists its numbers
    qtbot.waitUntil(lambda: "recipe: kappa|cohen" in page.board.details.toPlainText())
    # a click focuses a figure too, and the focused one is framed in the accent colour
    from PySide6.QtGui import QColor

    from clipscribe.ui import theme
    conf = figs["confusion"]
    qtbot.mouseClick(conf, Qt.MouseButton.LeftButton, pos=conf.rect().center())
    qtbot.waitUntil(conf.hasFocus)
    edge = QColor(theme.FOCUS_FRAME).rgb()
    assert conf.grab().toImage().pixel(1, conf.height() // 2) == edge
    assert figs["pairwise"].grab().toImage().pixel(1, figs["pairwise"].height() // 2) != edge
    grab = page.board.grab()
    assert grab.width() > 600 and grab.height() > 400


def test_view_board_opens_on_the_agreement_board(qtbot, sample, tmp_path):
    from PySide6.QtCore import QSettings

    from clipscribe import Project
    from clipscribe.ui.app import application, open_window
    folder, _ = sample
    application()
    with Project.open(folder) as p:
        w = open_window(p, view="board",
                        settings=QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat))
        qtbot.addWidget(w)
        page = w.review_desk
        assert w.stack.currentWidget() is not w.stack.widget(0)   # the review view
        assert page.currentWidget() is page.board
        with qtbot.waitSignal(page.board.loaded, timeout=30000):
            pass
        assert "Krippendorff alpha" in page.board.summary.text()
        w.close()
