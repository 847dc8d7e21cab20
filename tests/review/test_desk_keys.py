"""Review desk keys for settling (accept an annotator's captions, copy a track to gold) and the
queue's words: the clip number, not a rank, and no column named like a dataset split."""

from PySide6.QtCore import Qt

from clipscribe.ui.review.queue_model import COLUMNS


def _desk(qtbot, window):
    w, p = window()
    desk = w.review_desk.desk
    qtbot.waitUntil(lambda: desk.viewer.frame_number is not None, timeout=5000)
    return w, p, desk


def test_shift_a_accepts_every_caption_of_the_current_annotator(qtbot, window):
    w, p, desk = _desk(qtbot, window)
    m = desk.caption_model
    col = next(i for i, c in enumerate(m.cols) if len(c) >= 2)
    wanted = {c.id for c in m.cols[col]}
    desk.caption_view.setFocus()
    desk.caption_view.setCurrentIndex(m.index(0, col))
    qtbot.waitUntil(desk.caption_view.hasFocus, timeout=2000)
    qtbot.keyClick(desk.caption_view, Qt.Key.Key_A, Qt.KeyboardModifier.ShiftModifier)
    stored = p.clip_comparison(desk.cmp.clip.id).gold_captions
    assert wanted <= {g.source for g in stored}
    assert desk.editor.undo_stack.count() == 1                 # one decision


def test_ctrl_shift_g_copies_the_chosen_annotators_segments_to_gold(qtbot, window):
    w, p, desk = _desk(qtbot, window)
    cmp = desk.cmp
    who = next(a for a in cmp.annotators if cmp.segments.get(a))
    desk.settle.track_of.setCurrentText(who)
    desk.viewer.setFocus()
    qtbot.waitUntil(desk.viewer.hasFocus, timeout=2000)
    qtbot.keyClick(desk.viewer, Qt.Key.Key_G,
                   Qt.KeyboardModifier.ControlModifier | Qt.KeyboardModifier.ShiftModifier)
    gold = p.clip_comparison(cmp.clip.id).gold_segments
    assert sorted(gold) == sorted((g.label, g.start, g.end) for g in cmp.segments[who])


def test_queue_shows_clip_numbers_and_does_not_say_split(qtbot, window):
    w, p, desk = _desk(qtbot, window)
    m = desk.queue_model
    assert "Split" not in COLUMNS and "#" not in COLUMNS
    first = COLUMNS.index("Clip #")
    shown = [m.data(m.index(r, first)) for r in range(m.rowCount())]
    assert shown == [str(c) for c in m.clips()]
    # the messages name the same number: the title of the clip under review
    assert desk.title.text().startswith(f"Clip {shown[m.row_of(desk.cmp.clip.id)]}:")
    assert "label split" not in desk.title.text() and "label split" not in desk.queue_note.text()


def test_a_desk_decision_shows_saved_where_nothing_changed_yet_was(qtbot, window):
    w, p, desk = _desk(qtbot, window)
    assert w.save_state.text() == "Nothing changed yet"
    desk.editor.settle_label(desk.labels[0])
    both = w.statusBar().currentMessage() + " | " + w.save_state.text()
    assert w.save_state.text().startswith("Saved ") and "Nothing changed yet" not in both


def test_the_report_action_has_one_name_on_menu_and_board(qtbot, window):
    from PySide6.QtWidgets import QPushButton
    w, p, desk = _desk(qtbot, window)
    page = w.review_desk
    name = page.export_action.text()
    assert name == "Write agreement report…"
    assert [b.text() for b in page.board.findChildren(QPushButton) if "report" in b.text()] == [name]
    menus = [a.text() for m in w.menuBar().findChildren(type(w.menuBar().addMenu("x")))
             for a in m.actions() if "report" in a.text().lower()]
    assert set(menus) <= {name}


def test_gold_table_and_track_label_name_the_same_last_frame(qtbot, window):
    from clipscribe.ui.review.tracks import segment_text
    w, p, desk = _desk(qtbot, window)
    clip, label = desk.cmp.clip.id, desk.labels[0]
    assert desk.segment_model.replace([(label, 25, 46)])      # stored end 46, exclusive
    assert p.gold_segments(clip) == [(clip, label, 25, 46)]
    m = desk.segment_model
    assert m.headerData(2, Qt.Orientation.Horizontal) == "Last frame"
    gold = [t for t in desk.tracks.tracks if t[0] == "gold"][0][1]
    on_track = [segment_text(*g) for g in gold]
    in_table = [f"{m.index(r, 0).data()} {m.index(r, 1).data()}–{m.index(r, 2).data()}"
                for r in range(m.rowCount())]
    assert on_track == in_table == [f"{label} 25–45"]
