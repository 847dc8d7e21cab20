"""Every command of the workbench as a QAction: one place for names, keys and tooltips.

The menus, the buttons and the shortcut sheet are all built from these actions.
"""

from __future__ import annotations

from collections.abc import Callable

from PySide6.QtGui import QAction, QKeySequence

Key = QKeySequence.StandardKey


def make_action(parent, text: str, keys, slot: Callable | None, group: str, *,
                tip: str = "", data=None, checkable: bool = False) -> QAction:
    """An action whose tooltip names its shortcut."""
    a = QAction(text, parent)
    if keys is not None:
        seqs = keys if isinstance(keys, list) else [keys]
        a.setShortcuts([QKeySequence(k) if isinstance(k, str) else k for k in seqs]
                       if not isinstance(keys, Key) else QKeySequence.keyBindings(keys))
    shown = ", ".join(k.toString(QKeySequence.SequenceFormat.NativeText) for k in a.shortcuts())
    a.setToolTip(f"{tip or text.replace('&', '').rstrip('…')}" + (f"  ({shown})" if shown else ""))
    a.setStatusTip(tip)
    a.setProperty("group", group)
    a.setCheckable(checkable)
    if data is not None:
        a.setData(data)
    if slot is not None:
        a.triggered.connect(lambda _checked=False: slot())
    parent.addAction(a)
    return a


def _open_export(w) -> None:
    from ..dialogs.export_dialog import open_export_dialog  # loaded on first use
    open_export_dialog(w)


def _import_records(w) -> None:
    from ..dialogs.import_dialog import import_into  # loaded on first use
    if import_into(w):
        w.queue_model.reload()
        w.refresh()


def build_actions(w) -> dict[str, QAction]:
    """The window's commands; ``w`` is the MainWindow providing the slots."""
    A = lambda *args, **kw: make_action(w, *args, **kw)  # noqa: E731
    pl = w.player
    lead = w.project.role(w.project.user) == "lead"
    acts = {
        # clip
        "submit": A("Submit clip", "Ctrl+Return", w.submit_clip, "Clip",
                    tip="Mark your work on this clip finished and go to the next unfinished one"),
        "skip": A("Skip clip…", "Ctrl+J", w.clip_panel.show_skip_prompt, "Clip",
                  tip="Skip this clip, giving a reason"),
        "unsure": A("Flag unsure", "Ctrl+U", lambda: w.editor.set_state("unsure"), "Clip",
                    tip="Flag that you are not sure about this clip"),
        "reopen": A("Reopen clip", "Ctrl+Shift+U", lambda: w.editor.set_state("open"), "Clip",
                    tip="Set your state of this clip back to open"),
        "next_unfinished": A("Next unfinished clip", "Ctrl+G", w.next_unfinished, "Clip"),
        "next_clip": A("Next clip", "PgDown", lambda: w.step_clip(1), "Clip"),
        "prev_clip": A("Previous clip", "PgUp", lambda: w.step_clip(-1), "Clip"),
        "clear_label": A("Clear clip label", "Backspace", lambda: w.editor.set_label(None), "Clip"),
        # playback
        "play": A("Play / pause", "Space", pl.toggle, "Playback"),
        "back_frame": A("Back one frame", "Left", lambda: pl.step(-1), "Playback"),
        "fwd_frame": A("Forward one frame", "Right", lambda: pl.step(1), "Playback"),
        "back_second": A("Back one second", "Shift+Left", lambda: pl.step_seconds(-1), "Playback"),
        "fwd_second": A("Forward one second", "Shift+Right", lambda: pl.step_seconds(1), "Playback"),
        "first_frame": A("First frame", "Home", lambda: pl.seek(0), "Playback"),
        "last_frame": A("Last frame", "End", lambda: pl.seek(pl.frame_count - 1), "Playback"),
        "slower": A("Slower", "-", lambda: pl.change_speed(-1), "Playback"),
        "faster": A("Faster", "=", lambda: pl.change_speed(1), "Playback"),
        "loop": A("Loop segment", "L", w.toggle_loop, "Playback", checkable=True,
                  tip="Play the selected segment over and over"),
        # segments
        "mark_start": A("Mark start", "B", w.mark_start, "Segments",
                        tip="Start a segment at the playhead"),
        "mark_end": A("Mark end", "E", w.mark_end, "Segments",
                      tip="End the segment at the playhead (this frame included)"),
        "split": A("Split segment", "/", w.split_segment, "Segments",
                   tip="Cut the segment under the playhead in two at the playhead"),
        "merge": A("Merge with next", "M", w.merge_segment, "Segments",
                   tip="Join the selected segment with the one after it"),
        "delete_segment": A("Delete segment", "Delete", w.delete_segment, "Segments"),
        "prev_segment": A("Select previous segment", "Alt+Left", lambda: w.select_segment(-1), "Segments"),
        "next_segment": A("Select next segment", "Alt+Right", lambda: w.select_segment(1), "Segments"),
        "nudge_start_back": A("Start edge one frame earlier", "Ctrl+Left",
                              lambda: w.nudge_edge("start", -1), "Segments"),
        "nudge_start_fwd": A("Start edge one frame later", "Ctrl+Right",
                             lambda: w.nudge_edge("start", 1), "Segments"),
        "nudge_end_back": A("End edge one frame earlier", "Ctrl+Shift+Left",
                            lambda: w.nudge_edge("end", -1), "Segments"),
        "nudge_end_fwd": A("End edge one frame later", "Ctrl+Shift+Right",
                           lambda: w.nudge_edge("end", 1), "Segments"),
        "jump_start": A("Go to segment start", "[", lambda: w.jump_to_edge("start"), "Segments",
                        tip="Playhead to the first frame of the selected segment"),
        "jump_end": A("Go to segment end", "]", lambda: w.jump_to_edge("end"), "Segments",
                      tip="Playhead to the last frame of the selected segment (included)"),
        "zoom_in": A("Zoom timeline in", ["Ctrl+=", "Ctrl++"], lambda: w.timeline.zoom(2),
                     "Segments", tip="Show half as many frames on the timeline, around the playhead"),
        "zoom_out": A("Zoom timeline out", "Ctrl+-", lambda: w.timeline.zoom(0.5), "Segments"),
        "zoom_all": A("Whole clip on the timeline", "Ctrl+0", w.timeline.zoom_all, "Segments"),
        # editing
        "undo": w.editor.undo_stack.createUndoAction(w, "Undo"),
        "redo": w.editor.undo_stack.createRedoAction(w, "Redo"),
        "captions": A("Write captions", "Ctrl+E", w.captions.focus_first_empty, "Edit",
                      tip="Put the cursor in the first empty caption"),
        "save_captions": A("Save captions, keeping mine", "Ctrl+S", w.captions.keep_mine, "Edit",
                           tip="Save every caption now, also over one changed elsewhere "
                               "or anew when it was deleted elsewhere"),
        "reload_captions": A("Reload captions, taking theirs", "Ctrl+R", w.captions.take_theirs,
                             "Edit", tip="Replace captions changed elsewhere with the stored text, "
                                         "clear those deleted elsewhere"),
        "next_caption": A("Next caption", "Alt+Down", lambda: w.captions.step_focus(1), "Edit",
                          tip="Put the cursor in the next caption field"),
        "prev_caption": A("Previous caption", "Alt+Up", lambda: w.captions.step_focus(-1), "Edit",
                          tip="Put the cursor in the previous caption field"),
        "go_to_clip": A("Go to clip…", "Ctrl+F", w.go_to_clip, "Clip",
                        tip="Open a clip by its number or a part of its file name"),
        "viewer": A("Back to viewer", "Esc", w.focus_viewer, "Edit"),
        "queue": A("Go to clip queue", "Ctrl+L", w.focus_queue, "Edit"),
        # views and help
        "work_view": A("Work view", "Ctrl+1", lambda: w.show_view("work"), "View", checkable=True),
        "review_view": A("Review view", "Ctrl+2", lambda: w.show_view("review"), "View", checkable=True),
        "shortcuts": A("Keyboard shortcuts", Key.HelpContents, w.show_shortcuts, "Help"),
        "cautions": A("Working with video of people", None, w.show_cautions, "Help"),
        "export": A("Export dataset…", "Ctrl+Shift+E", lambda: _open_export(w), "File",
                    tip="Check train/val/test splits for leakage, then write the dataset"
                    if lead else "Only a lead can export a dataset"),
        "open_other": A("Open another project…", "Ctrl+O", w.open_other_project, "File",
                        tip="Close this project and open, make or build another"),
        "setup": A("Set up project…", "Ctrl+Shift+P", w.show_setup, "File",
                   tip="The label set, and the videos of this project (leads)"),
        "import": A("Import records…", None, lambda: _import_records(w), "File",
                    tip="Import labels, segments and captions from JSON Lines, or clip labels "
                    "from CSV, all or nothing"),
        "quit": A("Quit", Key.Quit, w.close, "File"),
    }
    acts["export"].setEnabled(lead)
    acts["setup"].setEnabled(lead)
    for name, short in (("back_second", "−1 s"), ("back_frame", "−1 frame"), ("play", "Play"),
                        ("fwd_frame", "+1 frame"), ("fwd_second", "+1 s"), ("loop", "Loop")):
        acts[name].setIconText(short)
    for name, key in (("undo", Key.Undo), ("redo", Key.Redo)):
        a = acts[name]
        a.setShortcuts(QKeySequence.keyBindings(key))
        a.setProperty("group", "Edit")
        w.addAction(a)
    for info in w.label_infos:
        acts[f"label:{info.name}"] = A(
            info.name, info.key or None, lambda n=info.name: w.editor.set_label(n), "Clip labels",
            tip=f"Label the clip “{info.name}”. {info.guideline}".strip(), data=info.name)
        if info.key:
            acts[f"seglabel:{info.name}"] = A(
                f"Segment: {info.name}", f"Shift+{info.key.upper()}",
                lambda n=info.name: w.relabel_segment(n), "Segments",
                tip=f"Give the selected segment the label “{info.name}”", data=info.name)
    return acts
