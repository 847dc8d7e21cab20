"""Resuming where one left off, the shortcut sheet, tooltips, the review placeholder."""

from PySide6.QtGui import QKeySequence

from clipscribe.ui.dialogs.help import ShortcutSheet, shortcut_rows

from .conftest import wait_frame


def test_reopens_on_same_clip_and_frame(qtbot, sample, open_window, settings):
    w, p = open_window(sample, "annotator-2")
    wait_frame(qtbot, w)
    w.open_clip(7)
    w.player.seek(23)
    qtbot.waitUntil(lambda: settings.value(f"resume/{sample.resolve()}/frame") in (23, "23"),
                    timeout=2000)                       # written as you move, not only on close
    w2, _ = open_window(sample, "annotator-2", settings=settings)
    wait_frame(qtbot, w2, 23)
    assert w2.clip.id == 7 and w2.player.frame == 23


def test_shortcut_sheet_lists_every_action_with_a_key(qtbot, sample, open_window):
    w, _ = open_window(sample, "annotator-1")
    rows = shortcut_rows(w.all_actions())
    with_keys = [a for a in w.all_actions() if a.shortcuts()]
    assert len(rows) == len(with_keys) > 30
    sheet = ShortcutSheet(w.all_actions(), w)
    qtbot.addWidget(sheet)
    assert sheet.table.rowCount() == len(rows)
    names = {sheet.table.item(r, 1).text() for r in range(sheet.table.rowCount())}
    assert {"Mark start", "Mark end", "Submit clip", "Skip clip…", "Flag unsure", "Undo", "pick up"} <= names
    keys = [k for a in with_keys for k in a.shortcuts()]
    assert len(keys) == len(set(k.toString() for k in keys)), "two commands share a key"
    for a in with_keys:
        if a.property("group") != "Edit" or a.text() not in ("Undo", "Redo"):
            assert a.shortcut().toString(QKeySequence.SequenceFormat.NativeText) in a.toolTip()
    assert w.actions_["undo"].shortcuts() == QKeySequence.keyBindings(QKeySequence.StandardKey.Undo)


def test_review_view_placeholder(qtbot, sample, open_window):
    w, _ = open_window(sample, "annotator-1", view="review")
    assert w.stack.currentWidget() is w.review_page
    w.show_view("work")
    assert w.stack.currentIndex() == 0


def test_cautions_note_is_in_help_menu(qtbot, sample, open_window):
    w, _ = open_window(sample, "annotator-1")
    help_menu = [m for m in w.menuBar().actions() if m.text() == "&Help"][0].menu()
    assert "Working with video of people" in [a.text() for a in help_menu.actions()]
