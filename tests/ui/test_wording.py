"""One word per meaning across the workbench, the review desk and the command line."""

import shutil

from PySide6.QtCore import Qt

from clipscribe import Project
from clipscribe.cli import main

from .test_editing import ready


def test_stats_and_the_workbench_both_call_an_untouched_clip_open(qtbot, sample, open_window, capsys):
    w, p = open_window(sample, "annotator-3")
    ready(qtbot, w)
    copy = sample / "media" / "fresh" / "take-99.mp4"
    copy.parent.mkdir()
    shutil.copyfile(sample / "media" / p.clip(1).path, copy)
    with Project.open(sample) as lead:                        # adding clips is a lead's job
        lead.add_clip(copy, group="fresh")                    # nobody has started it
    w.queue_model.reload()
    by_state = p.stats()["clips_by_state"]
    assert "new" not in by_state and by_state["open"] == 1
    assert main(["stats", str(sample)]) == 0
    out = capsys.readouterr().out
    assert "clips_by_state" in out and "new=" not in out
    m = w.queue_model
    tips = [m.index(r, 0).data(Qt.ItemDataRole.ToolTipRole) for r in range(m.rowCount())]
    assert not any("clip state new" in t for t in tips)
    assert w.queue.state.findText("untouched") >= 0           # the filter for one's own open clips


def test_saved_and_nothing_changed_yet_are_never_shown_together(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-3")
    ready(qtbot, w)

    def shown():
        return w.statusBar().currentMessage() + " | " + w.save_state.text()
    assert "Nothing changed yet" in shown() and "Saved" not in shown()
    qtbot.keyClick(w.viewer, Qt.Key.Key_K)
    assert "Saved" in shown() and "Nothing changed yet" not in shown()
