"""The workbench fits laptop screens: sized to the screen area, saved geometry only when it fits,
and every visible widget inside the window at 1366×768 and 1440×900."""

import pytest
from PySide6.QtCore import QRect, Qt
from PySide6.QtWidgets import QApplication, QWidget

from clipscribe.ui.focus import fit_window


from .test_editing import ready

SCREENS = [(1366, 768), (1440, 900)]  # the two laptop screens every window must fit


@pytest.mark.parametrize("width,height", SCREENS)
def test_work_view_fits_with_nothing_outside(qtbot, sample, open_window, fit_check, width, height):
    w, _ = open_window(sample, "annotator-3")
    ready(qtbot, w)
    assert fit_check(w, width, height, "work") == []
    # the parts found off-screen before: all there and wholly inside
    for part in [w.statusBar(), w.save_state, w.timeline, w.scrub,
                 *w.clip_panel.label_buttons.values()]:
        assert part.isVisible() and part.visibleRegion().boundingRect() == part.rect(), part


def test_saved_geometry_is_used_only_when_it_fits_the_screen(qtbot, sample, open_window, settings):
    w, _ = open_window(sample, "annotator-3")
    fit_window(w, QRect(0, 0, 1920, 1200))
    big = w.saveGeometry()
    assert w.width() == 1440
    assert not fit_window(w, QRect(0, 0, 1366, 768), big)      # saved on a bigger screen
    assert w.width() <= 1366 and w.height() <= 768 - 40
    fit_window(w, QRect(0, 0, 1366, 768))
    w.resize(1200, 600)
    small = w.saveGeometry()
    assert fit_window(w, QRect(0, 0, 1366, 768), small)        # fits: kept as the person left it
    assert w.height() == 600


def test_minimum_size_leaves_room_on_a_1366_by_768_screen(qtbot, sample, open_window):
    w, _ = open_window(sample, "annotator-3")
    ready(qtbot, w)
    m = w.minimumSizeHint().expandedTo(w.minimumSize())
    assert m.width() <= 1366 - 16 and m.height() <= 768 - 40


def test_queue_names_the_file_first_and_elides_at_the_end(qtbot, sample, open_window, fit_check):
    w, p = open_window(sample, "annotator-3")
    ready(qtbot, w)
    m, view = w.queue_model, w.queue.view
    c = m.row(0).clip
    shown = m.index(0, 0).data()
    assert shown.startswith(c.path.rsplit("/", 1)[-1])           # the file name, then the number
    assert str(c.id) in shown
    tip = m.index(0, 0).data(Qt.ItemDataRole.ToolTipRole)
    assert c.path.rsplit("/", 1)[0] in tip                       # the folder is in the tooltip
    assert view.textElideMode() == Qt.TextElideMode.ElideRight
    fit_check(w, 1366, 768)
    width = w.queue.width()
    assert width >= 280
    w.clip_panel.show_clip("Clip 1: " + "a-very-long-folder-name/" * 12 + "take.mp4",
                           None, "open", None)
    w.captions.rules.setText("A much longer caption rule " * 10)
    for _ in range(3):
        QApplication.processEvents()
    assert w.queue.width() == width                              # other text does not squeeze it


def test_home_and_end_in_the_queue_go_to_the_first_and_last_clip(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-3")
    ready(qtbot, w)
    view = w.queue.view
    view.setFocus()
    qtbot.waitUntil(view.hasFocus, timeout=2000)
    frame = w.player.frame
    qtbot.keyClick(view, Qt.Key.Key_End)
    last = w.queue_model.row(w.queue_model.rowCount() - 1).clip.id
    assert view.currentIndex().row() == w.queue_model.rowCount() - 1
    assert w.clip.id == last
    qtbot.keyClick(view, Qt.Key.Key_Home)
    assert view.currentIndex().row() == 0 and w.clip.id == w.queue_model.row(0).clip.id
    w.viewer.setFocus()
    qtbot.waitUntil(w.viewer.hasFocus, timeout=2000)
    w.player.seek(10)
    qtbot.waitUntil(lambda: w.player.frame == 10, timeout=3000)
    qtbot.keyClick(w.viewer, Qt.Key.Key_Home)                    # elsewhere: the first frame
    assert w.player.frame == 0 and frame is not None


def test_background_job_words_on_the_strip_have_enough_contrast(qtbot):
    """WCAG 2.1 §1.4.3 (minimum contrast, W3C): text needs 4.5:1 against what is behind it.
    Measured on the drawn pixels, over the lightest thumbnails there can be."""
    from PySide6.QtGui import QColor, QImage

    from clipscribe.ui import theme
    from clipscribe.ui.workbench.scrub_bar import ScrubBar
    bar = ScrubBar()
    qtbot.addWidget(bar)
    bar.resize(800, bar.sizeHint().height())
    bar.reset(100)
    white = QImage(64, 48, QImage.Format.Format_RGB32)
    white.fill(QColor("#ffffff"))
    bar.set_thumbnails([white] * 10)
    bar.set_status("Working: thumbnails 40%")
    img = bar.grab().toImage()
    box = bar.status_box.toAlignedRect()
    assert box.width() > 20
    bg = img.pixelColor(box.left() + 2, box.center().y()).name()
    inside = [img.pixelColor(x, y).name() for x in range(box.left(), box.right())
              for y in range(box.top(), box.bottom())]
    text = max(set(inside), key=theme.luminance)               # the text's own pixels
    assert theme.contrast_ratio(text, bg) >= 4.5
    assert theme.contrast_ratio(theme.STATUS_TEXT, theme.STATUS_BG) >= 4.5
    # the check can fail: the old grey text straight on a white thumbnail does
    assert theme.contrast_ratio(theme.MUTED_TEXT, "#ffffff") < 4.5


@pytest.mark.parametrize("width,height", SCREENS)
def test_setup_dialog_and_start_window_fit(qtbot, sample, settings, outside, tmp_path, width, height):
    from clipscribe import Project
    from clipscribe.ui.dialogs.setup import ProjectSetup
    from clipscribe.ui.dialogs.start import StartWindow
    from PySide6.QtWidgets import QAbstractSpinBox, QLabel, QPushButton
    with Project.open(sample) as p:
        d = ProjectSetup(p, pick=lambda caption: "", ask=lambda what: "discard")
        start = StartWindow(settings=settings, pick=lambda caption, folder: "")
        for name, win in (("setup", d), ("start", start)):
            qtbot.addWidget(win)
            win.show()
            QApplication.processEvents()
            hint = win.size().expandedTo(win.minimumSizeHint())
            assert hint.width() <= width - 16 and hint.height() <= height - 40, (name, hint)
            win.grab().save(str(tmp_path / f"{name}-{width}x{height}.png"))
            assert outside(win) == [], name
            squeezed = [getattr(w, "text", lambda: w)() for w in win.findChildren(QWidget)
                        if (isinstance(w, (QPushButton, QAbstractSpinBox))
                            or isinstance(w, QLabel) and not w.wordWrap())
                        and w.isVisible() and w.width() < w.minimumSizeHint().width()]
            assert squeezed == [], name                         # no word or button cut short
            if win is d:                                        # nothing drawn over the list
                lt, row = d.label_text, d.ordinal
                assert lt.mapTo(d, lt.rect().bottomLeft()).y() < row.mapTo(d, row.rect().topLeft()).y()
            win.close()
