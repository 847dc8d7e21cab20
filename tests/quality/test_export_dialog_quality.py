"""The export dialog shows split and caption warnings, the caption policy and file names."""

from __future__ import annotations

from PySide6.QtCore import Qt

from clipscribe.ui.dialogs.export_dialog import ExportDialog

WAIT_MS = 20000


def _check(qtbot, dlg):
    dlg.check_btn.click()
    qtbot.waitUntil(lambda: not dlg.busy, timeout=WAIT_MS)
    assert dlg.plan is not None, dlg.message.text()


def test_dialog_warns_about_splits_and_captions_and_names_files(qtbot, team):
    for c in team.clips():
        for who in ("ann-a", "ann-b"):
            team.set_clip_label(c.id, who, "stack")
    first = team.clips()[0]
    team.add_caption(first.id, "ann-a", "a worker stacks boxes")
    team.add_caption(first.id, "ann-b", "boxes are piled up")
    team.set_gold_label(first.id, "stack")
    team.set_gold_captions(first.id, ["a worker stacks boxes"])
    dlg = ExportDialog(team)
    qtbot.addWidget(dlg)
    dlg.show()
    assert dlg.results.warnings.isHidden()
    _check(qtbot, dlg)
    text = dlg.results.warnings.text()
    assert not dlg.results.warnings.isHidden()
    assert "split 'train' holds 38% of the clips (3 of 8) where its ratio is 70%" in text
    assert "8 of 8 clips have fewer than the 3 reference captions" in text
    # leakage rows name files, not ids (the synthetic videos look alike across splits)
    model = dlg.results.leak_model
    files_col = model.headers.index("Files")
    shown = [model.data(model.index(r, files_col), Qt.ItemDataRole.DisplayRole)
             for r in range(model.rowCount())]
    assert shown and all(".mp4" in s for s in shown)
    # choosing gold + agreeing makes the check stale, and a new check adds ann-b's caption
    key = dlg._key()
    dlg.caption_policy.setCurrentIndex(dlg.caption_policy.findData("gold+agreeing"))
    assert dlg._key() != key  # the check on screen no longer matches the options
    _check(qtbot, dlg)
    assert [t for t, _ in dlg.plan.captions[str(first.id)].captions] == [
        "a worker stacks boxes", "boxes are piled up"]


def test_left_out_table_names_the_file_and_the_skips(qtbot, team):
    clip = team.clips()[4]
    team.set_clip_label(clip.id, "ann-a", "stack")
    team.set_clip_label(clip.id, "ann-b", "sort")
    team.set_clip_label(clip.id, "ann-c", "stack")
    team.set_clip_state(clip.id, "ann-c", "skipped", "hands out of frame")
    dlg = ExportDialog(team)
    qtbot.addWidget(dlg)
    _check(qtbot, dlg)
    rows = dlg.results.left_model.rows
    row = next(r for r in rows if r[1] == str(clip.id))
    assert row[0] == clip.path and row[2] == "2 (+1 skipped)"
    assert row[3].startswith("tie between")
