"""Keyboard and focus in the workbench: where keys go after submit, inside caption fields and on
Tab; text undo before edit undo; the start mark on clip change; growing caption fields."""

from PySide6.QtCore import Qt
from PySide6.QtWidgets import QApplication

from .test_editing import ready

ME = "annotator-3"  # has left most sample clips open
CTRL = Qt.KeyboardModifier.ControlModifier


def test_submit_gives_focus_to_the_viewer_so_a_label_key_labels_the_next_clip(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    ready(qtbot, w)
    first = w.clip.id
    qtbot.keyClick(w.viewer, Qt.Key.Key_K)                     # a label, so submit is allowed
    edit = w.captions.slots[0].edit
    edit.setFocus()
    qtbot.waitUntil(edit.hasFocus, timeout=2000)
    qtbot.keyClick(edit, Qt.Key.Key_Return, CTRL)              # submit from inside a caption
    assert w.clip.id != first
    assert QApplication.focusWidget() is w.viewer
    nxt = w.clip.id
    texts = [s.edit.text() for s in w.captions.slots]
    qtbot.keyClick(QApplication.focusWidget(), Qt.Key.Key_P)   # meant as "pick up"
    assert p.my_clip_label(nxt) == "pick up"
    assert [s.edit.text() for s in w.captions.slots] == texts  # no stray "p" in a caption


def test_letters_in_a_caption_are_text_not_commands(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    ready(qtbot, w)
    clip = w.clip.id
    label = p.my_clip_label(clip)
    edit = w.captions.slots[-1].edit
    edit.setFocus()
    qtbot.waitUntil(edit.hasFocus, timeout=2000)
    edit.end(False)
    qtbot.keyClicks(edit, " bkpe")                             # Mark start, labels, Mark end
    assert edit.text().endswith(" bkpe")
    assert w.timeline.pending_start is None
    assert p.my_clip_label(clip) == label


def test_leaving_a_clip_takes_the_cursor_out_of_its_caption(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    ready(qtbot, w)
    edit = w.captions.slots[0].edit
    edit.setFocus()
    qtbot.waitUntil(edit.hasFocus, timeout=2000)
    w.step_clip(1)
    assert not any(s.edit.hasFocus() for s in w.captions.slots)
    assert QApplication.focusWidget() is w.viewer


def test_tab_goes_round_the_clip_panel_and_never_reaches_the_queue_filters(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    ready(qtbot, w)
    side = w.captions.parentWidget()
    while side.objectName() != "clipSide":
        side = side.parentWidget()
    filters = [w.queue.state, w.queue.label, w.queue.group, w.queue.assignee]
    before = [f.currentIndex() for f in filters]
    last = w.captions.slots[-1].edit
    last.setFocus()
    qtbot.waitUntil(last.hasFocus, timeout=2000)
    seen = []
    for _ in range(3 * len(side.fields()) + 2):
        qtbot.keyClick(QApplication.focusWidget(), Qt.Key.Key_Tab)
        f = QApplication.focusWidget()
        seen.append(f)
        assert side.isAncestorOf(f), f"Tab left the clip panel for {f!r}"
    assert w.captions.slots[0].edit in seen                    # it went round
    qtbot.keyClick(QApplication.focusWidget(), Qt.Key.Key_Backtab, Qt.KeyboardModifier.ShiftModifier)
    assert side.isAncestorOf(QApplication.focusWidget())
    assert [f.currentIndex() for f in filters] == before


def test_ctrl_z_in_a_caption_undoes_typing_first_then_the_last_edit(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    ready(qtbot, w)
    clip = w.clip.id
    before = p.my_clip_label(clip)
    qtbot.keyClick(w.viewer, Qt.Key.Key_D)                     # "put down": the last edit
    assert p.my_clip_label(clip) == "put down" != before
    slot = w.captions.slots[0]
    stored = slot.edit.text()
    slot.edit.setFocus()
    qtbot.waitUntil(slot.edit.hasFocus, timeout=2000)
    slot.edit.end(False)
    qtbot.keyClicks(slot.edit, " and waits")
    qtbot.keyClick(slot.edit, Qt.Key.Key_Z, CTRL)
    assert slot.edit.text() == stored                          # the typing went first
    assert p.my_clip_label(clip) == "put down"
    qtbot.keyClick(slot.edit, Qt.Key.Key_Z, CTRL)              # nothing typed left: the edit
    assert p.my_clip_label(clip) == before
    assert [c.text for c in p.caption_rows(clip=clip, annotator=ME)
            if c.id == slot.caption_id] in ([stored], [])


def test_a_start_mark_and_its_status_go_when_the_clip_changes(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    ready(qtbot, w)
    qtbot.keyClick(w.viewer, Qt.Key.Key_B)
    assert w.timeline.pending_start is not None
    assert "Start marked" in w.statusBar().currentMessage()
    qtbot.keyClick(w.viewer, Qt.Key.Key_PageDown)
    assert w.timeline.pending_start is None
    assert "Start marked" not in w.statusBar().currentMessage()


def test_captions_wrap_and_grow_and_return_saves_without_a_line_break(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    ready(qtbot, w)
    slot = w.captions.slots[-1]
    edit = slot.edit
    edit.setFocus()
    qtbot.waitUntil(edit.hasFocus, timeout=2000)
    edit.selectAll()
    one_line = edit.height()
    text = ("The robot arm reaches over the table, closes its gripper on the small green block, "
            "lifts it slowly above the red one and sets it down on top before moving back")
    qtbot.keyClicks(edit, text)
    qtbot.waitUntil(lambda: edit.height() > one_line, timeout=2000)
    assert edit.text() == text                                  # nothing cut off
    qtbot.keyClick(edit, Qt.Key.Key_Return)
    assert "\n" not in edit.text()
    assert text in [c.text for c in p.caption_rows(clip=w.clip.id, annotator=ME)]


def test_undo_reaches_back_across_reopening_the_project(qtbot, sample, open_window, settings):
    w, p = open_window(sample, ME)
    ready(qtbot, w)
    clip = w.clip.id
    before = p.my_clip_label(clip)
    w.player.seek(5)
    qtbot.keyClick(w.viewer, Qt.Key.Key_B)
    w.player.seek(20)
    qtbot.keyClick(w.viewer, Qt.Key.Key_E)                     # one segment 5–20
    segs = p.segments(clip=clip, annotator=ME)
    w.player.seek(12)
    qtbot.keyClick(w.viewer, Qt.Key.Key_Slash)                 # split: two rows, one action
    qtbot.keyClick(w.viewer, Qt.Key.Key_S)                     # "push"
    qtbot.keyClick(w.viewer, Qt.Key.Key_Z, CTRL)               # undo "push"
    w.close()
    p.close()

    w2, p2 = open_window(sample, ME)                           # reopened on the same clip
    ready(qtbot, w2)
    assert w2.clip.id == clip
    assert w2.editor.undo_stack.canUndo()
    qtbot.keyClick(w2.viewer, Qt.Key.Key_Z, CTRL)              # undo the split, as one step
    assert [(g.start, g.end) for g in p2.segments(clip=clip, annotator=ME)] == \
        [(g.start, g.end) for g in segs]
    qtbot.keyClick(w2.viewer, Qt.Key.Key_Z, CTRL)              # undo the new segment
    assert len(p2.segments(clip=clip, annotator=ME)) == len(segs) - 1
    assert p2.my_clip_label(clip) == before                    # "push" stayed undone
    w2.editor.undo_stack.redo()
    assert len(p2.segments(clip=clip, annotator=ME)) == len(segs)


def _one_segment(qtbot, w, a, b):
    w.player.seek(a)
    qtbot.keyClick(w.viewer, Qt.Key.Key_B)
    w.player.seek(b)
    qtbot.keyClick(w.viewer, Qt.Key.Key_E)


def test_keys_nudge_a_segment_edge_and_jump_to_its_edges(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    ready(qtbot, w)
    clip = w.clip.id
    old = {g.id for g in p.segments(clip=clip, annotator=ME)}
    _one_segment(qtbot, w, 30, 40)
    seg = next(g for g in p.segments(clip=clip, annotator=ME) if g.id not in old)
    w.timeline.set_selected(seg.id)
    qtbot.keyClick(w.viewer, Qt.Key.Key_Left, CTRL)                          # start 30 → 29
    qtbot.keyClick(w.viewer, Qt.Key.Key_Right, CTRL | Qt.KeyboardModifier.ShiftModifier)  # end 41 → 42
    qtbot.keyClick(w.viewer, Qt.Key.Key_Right, CTRL | Qt.KeyboardModifier.ShiftModifier)  # → 43
    now = next(g for g in p.segments(clip=clip, annotator=ME) if g.id == seg.id)
    assert (now.start, now.end) == (29, 43)
    qtbot.keyClick(w.viewer, Qt.Key.Key_BracketLeft)
    assert w.player.frame == 29
    qtbot.keyClick(w.viewer, Qt.Key.Key_BracketRight)
    assert w.player.frame == 42                                # the last frame, included
    qtbot.keyClick(w.viewer, Qt.Key.Key_Z, CTRL)               # each nudge is one undo step
    now = next(g for g in p.segments(clip=clip, annotator=ME) if g.id == seg.id)
    assert (now.start, now.end) == (29, 42)


def test_keys_zoom_the_timeline_around_the_playhead(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    ready(qtbot, w)
    tl = w.timeline
    n = tl.frame_count
    w.player.seek(n // 2)
    qtbot.waitUntil(lambda: tl.playhead == n // 2, timeout=3000)
    qtbot.keyClick(w.viewer, Qt.Key.Key_Equal, CTRL)
    assert tl.view_span == round(n / 2)
    assert tl.view_start <= n // 2 < tl.view_start + tl.view_span
    x = tl.x_of(n // 2)
    assert 0 <= x <= tl.width()
    assert tl.frame_at(x) == n // 2                            # pixels and frames agree zoomed
    qtbot.keyClick(w.viewer, Qt.Key.Key_Minus, CTRL)
    assert tl.view_span == n
    qtbot.keyClick(w.viewer, Qt.Key.Key_Equal, CTRL)
    qtbot.keyClick(w.viewer, Qt.Key.Key_0, CTRL)
    assert (tl.view_start, tl.view_span) == (0, n)


def test_keys_step_between_captions(qtbot, sample, open_window):
    w, _ = open_window(sample, ME)
    ready(qtbot, w)
    edits = [s.edit for s in w.captions.slots]
    qtbot.keyClick(w.viewer, Qt.Key.Key_Down, Qt.KeyboardModifier.AltModifier)
    assert edits[0].hasFocus()
    qtbot.keyClick(edits[0], Qt.Key.Key_Down, Qt.KeyboardModifier.AltModifier)
    assert edits[1].hasFocus()
    qtbot.keyClick(edits[1], Qt.Key.Key_Up, Qt.KeyboardModifier.AltModifier)
    qtbot.keyClick(edits[0], Qt.Key.Key_Up, Qt.KeyboardModifier.AltModifier)
    assert edits[-1].hasFocus()                                # wraps round


def test_go_to_clip_by_number_or_by_part_of_its_name(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    ready(qtbot, w)
    clips = p.clips()
    target = clips[-1]
    w.open_found(str(target.id))
    assert w.clip.id == target.id
    other = clips[0]
    part = other.path.rsplit("/", 1)[-1][:-4].upper()          # any case, no folder
    w.open_found(part)
    assert w.clip.id == other.id
    w.open_found("no such clip anywhere")
    assert w.clip.id == other.id and "No clip" in w.statusBar().currentMessage()
    assert any(a.shortcut().toString() == "Ctrl+F" for a in w.all_actions()
               if a.text() == "Go to clip…")


def test_a_one_segment_clip_with_three_captions_takes_ten_non_text_keys(qtbot, sample, open_window):
    """Arriving on a clip (focus where submit left it) to submitting it: the keys counted
    are every key but the caption text itself."""
    from clipscribe import Project
    with Project.open(sample) as p:
        p.add_annotator("annotator-9")
    w, p = open_window(sample, "annotator-9")
    ready(qtbot, w)
    qtbot.keyClick(w.viewer, Qt.Key.Key_K)                     # a first clip, submitted by keys
    qtbot.keyClick(w.viewer, Qt.Key.Key_Return, CTRL)
    clip, keys = w.clip.id, 0
    texts = ["The arm lifts the red block", "A grey arm moves one block", "A block is stacked on another"]

    def key(k, mod=Qt.KeyboardModifier.NoModifier):
        nonlocal keys
        keys += 1
        qtbot.keyClick(QApplication.focusWidget(), k, mod)

    def type_(text):
        qtbot.keyClicks(QApplication.focusWidget(), text)
    shift = Qt.KeyboardModifier.ShiftModifier
    key(Qt.Key.Key_Right, shift)                               # to the action's start
    key(Qt.Key.Key_B)
    key(Qt.Key.Key_Right, shift)
    key(Qt.Key.Key_Right, shift)                               # to its end
    key(Qt.Key.Key_E)
    key(Qt.Key.Key_K)                                          # the clip label
    key(Qt.Key.Key_E, CTRL)                                    # to the first caption
    type_(texts[0])
    key(Qt.Key.Key_Down, Qt.KeyboardModifier.AltModifier)
    type_(texts[1])
    key(Qt.Key.Key_Down, Qt.KeyboardModifier.AltModifier)
    type_(texts[2])
    key(Qt.Key.Key_Return, CTRL)                               # submit
    assert keys == 10
    me = "annotator-9"
    assert p.clip_state(clip, me)[0] == "submitted" and p.my_clip_label(clip, me) == "stack"
    assert len(p.segments(clip=clip, annotator=me)) == 1
    assert sorted(c.text for c in p.caption_rows(clip=clip, annotator=me)) == sorted(texts)


def test_no_single_key_command_fires_while_typing_in_any_text_field(qtbot, sample, open_window):
    from PySide6.QtGui import QKeySequence
    w, p = open_window(sample, ME)
    ready(qtbot, w)
    single = sorted({s.toString() for a in w.all_actions() for s in a.shortcuts()
                     if len(s.toString()) == 1 and s.toString().isprintable()})
    assert {"B", "E", "L", "M", "/", "[", "]"} <= set(single)
    fired = []
    for a in w.all_actions():
        a.triggered.connect(lambda _c=False, a=a: fired.append(a.text()))
    w.clip_panel.show_skip_prompt()
    for field in [w.clip_panel.skip_reason] + [s.edit for s in w.captions.slots]:
        field.setFocus()
        qtbot.waitUntil(field.hasFocus, timeout=2000)
        before = field.text()
        for ch in single:
            qtbot.keyClick(field, QKeySequence(ch)[0].key())
        assert fired == [], (field.objectName(), fired)
        assert len(field.text()) == len(before) + len(single)    # every key became text
    w.clip_panel.hide_skip_prompt()


def test_a_caption_set_before_its_field_narrows_is_shown_whole(qtbot):
    # at start-up the first clip's captions are set while the panel is still wide; when the
    # layout narrows the field, the text wraps onto more lines and the field must grow with it
    from clipscribe.ui.workbench.caption_edit import CaptionEdit
    edit = CaptionEdit()
    qtbot.addWidget(edit)
    edit.resize(2000, edit.height())
    edit.show()
    qtbot.waitExposed(edit)
    edit.setText("the robot arm lowers the red block onto the bench slowly next to the blue "
                 "block under the lamp")
    one_line = edit.height()
    edit.resize(260, one_line)
    qtbot.waitUntil(lambda: edit.height() >= one_line + edit.fontMetrics().lineSpacing(),
                    timeout=2000)
    assert not edit.verticalScrollBar().isVisible()
