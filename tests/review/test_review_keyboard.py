"""Review by keyboard: Alt+1…9 settles and the next keys still work, the gold-label list never
offers a stale label, and the shortcut sheet lists the review desk's keys in full."""

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication

ALT = Qt.KeyboardModifier.AltModifier


def _desk(qtbot, window):
    w, p = window()
    desk = w.review_desk.desk
    qtbot.waitExposed(w)
    w.activateWindow()
    qtbot.waitUntil(lambda: desk.viewer.frame_number is not None, timeout=5000)
    desk.viewer.setFocus()
    qtbot.waitUntil(desk.viewer.hasFocus, timeout=2000)
    return w, p, desk


def _voter(desk):
    """Index of the first annotator with a label on the clip under review, and that label."""
    cmp = desk.cmp
    i = next(i for i, a in enumerate(cmp.annotators) if cmp.labels.get(a))
    return i, cmp.labels[cmp.annotators[i]]


def test_alt_digit_settles_and_alt_down_then_goes_to_the_next_clip(qtbot, window):
    w, p, desk = _desk(qtbot, window)
    first = desk.cmp.clip.id
    i, label = _voter(desk)
    qtbot.keyClick(QApplication.focusWidget(), Qt.Key(Qt.Key.Key_1 + i), ALT)
    qtbot.waitUntil(lambda: p.gold_labels().get(first) == label, timeout=3000)
    focus = QApplication.focusWidget()
    assert focus is not None and desk.isAncestorOf(focus), focus
    qtbot.keyClick(focus, Qt.Key.Key_Down, ALT)
    qtbot.waitUntil(lambda: desk.cmp.clip.id != first, timeout=3000)
    assert desk.queue_model.row_of(desk.cmp.clip.id) == desk.queue_model.row_of(first) + 1


def test_alt_digit_from_the_tab_bar_keeps_the_focus_in_the_desk(qtbot, window):
    """As after opening on the review view: the focus starts outside the desk."""
    w, p, desk = _desk(qtbot, window)
    tabs = w.review_desk.tabBar()
    tabs.setFocus()
    qtbot.waitUntil(tabs.hasFocus, timeout=2000)
    first = desk.cmp.clip.id
    i, label = _voter(desk)
    qtbot.keyClick(tabs, Qt.Key(Qt.Key.Key_1 + i), ALT)
    qtbot.waitUntil(lambda: p.gold_labels().get(first) == label, timeout=3000)
    qtbot.waitUntil(lambda: desk.settle.gold_now.text() == f"Settled: {label}", timeout=3000)
    focus = QApplication.focusWidget()
    assert focus is not None and desk.isAncestorOf(focus), focus
    qtbot.keyClick(focus, Qt.Key.Key_Down, ALT)
    qtbot.waitUntil(lambda: desk.cmp.clip.id != first, timeout=3000)


def test_the_gold_label_list_shows_the_clips_gold_or_nothing(qtbot, window):
    w, p, desk = _desk(qtbot, window)
    box, settle = desk.settle.any_label, desk.settle.settle_button
    first = desk.cmp.clip.id
    assert desk.cmp.gold_label is None
    assert box.currentIndex() == -1 and not settle.isEnabled()   # nothing chosen for the lead
    settle.click()
    assert p.gold_labels().get(first) is None
    i, label = _voter(desk)
    other = next(l for l in desk.labels if l != label)
    box.setCurrentText(other)                     # chosen in the list, but not settled
    assert settle.isEnabled()
    qtbot.keyClick(QApplication.focusWidget(), Qt.Key(Qt.Key.Key_1 + i), ALT)
    qtbot.waitUntil(lambda: p.gold_labels().get(first) == label, timeout=3000)
    qtbot.waitUntil(lambda: box.currentText() == label, timeout=3000)
    settle.click()                                # Settle now keeps the gold as it is
    assert p.gold_labels()[first] == label
    desk.step(1)
    assert desk.cmp.clip.id != first and desk.cmp.gold_label is None
    assert box.currentIndex() == -1 and not settle.isEnabled()
    desk.step(-1)
    assert desk.cmp.clip.id == first and box.currentText() == label


def test_add_gold_segment_needs_a_label_instead_of_taking_the_first(qtbot, window):
    w, p, desk = _desk(qtbot, window)
    clip = desk.cmp.clip.id
    before = p.clip_comparison(clip).gold_segments
    said = []
    desk.status.connect(said.append)
    desk.add_segment()
    assert p.clip_comparison(clip).gold_segments == before
    assert said and "choose one" in said[-1]


def test_shortcut_sheet_of_the_review_view_lists_the_desk_keys_uncut(qtbot, window):
    w, p, desk = _desk(qtbot, window)
    sheet = w.shortcut_sheet()
    qtbot.addWidget(sheet)
    sheet.show()
    qtbot.waitExposed(sheet)
    t = sheet.table
    rows = {t.item(r, 0).text(): t.item(r, 1).text() for r in range(t.rowCount())}
    for keys in ("Alt+Down", "Alt+Up", "Alt+1 … Alt+9", "Ctrl+Shift+R", "Ctrl+Shift+G", "F1, Help"):
        assert keys in rows, keys
    assert rows["Alt+Down"] == "Next disputed clip"
    assert "Mark start" not in rows.values()       # the work view's keys do not work here
    fm = t.fontMetrics()
    widest = max(fm.horizontalAdvance(k) for k in rows)
    assert t.columnWidth(0) >= widest + 6          # the key column is never cut
    visible = t.viewport().width()
    assert sum(t.columnWidth(c) for c in range(3)) <= visible + 1
    w.show_view("work")
    work = w.shortcut_sheet()
    qtbot.addWidget(work)
    names = {work.table.item(r, 1).text() for r in range(work.table.rowCount())}
    assert "Mark start" in names and "Next disputed clip" not in names


def test_opening_on_the_review_view_puts_the_focus_in_the_desk(qtbot, window):
    w, p = window()
    desk = w.review_desk.desk
    qtbot.waitExposed(w)
    w.activateWindow()
    qtbot.waitUntil(lambda: w.isActiveWindow() and desk.viewer.frame_number is not None,
                    timeout=5000)
    focus = QApplication.focusWidget()
    assert focus is desk.viewer                    # no click needed before the desk's keys
    first = desk.cmp.clip.id
    qtbot.keyClick(focus, Qt.Key.Key_Down, ALT)
    qtbot.waitUntil(lambda: desk.cmp.clip.id != first, timeout=3000)
    w.show_view("work")
    w.show_view("review")
    assert QApplication.focusWidget() is desk.viewer
