"""Suggestions in the workbench: bars on the label buttons, never set automatically, one key
accepts; what annotators see follows the lead's setting; training runs in the background."""

from __future__ import annotations

import pytest
from PySide6.QtCore import Qt

from clipscribe import Project

from .test_project_suggestions import labelled  # noqa: F401 (fixture)

TRAINED = 180_000  # ms: the first training computes every clip's features on a busy machine


def _set(folder, mode):
    with Project.open(folder) as p:
        p.set_suggestion_visibility(mode)


def _open(qtbot, open_window, folder, clip, user="ann-2"):
    w, p = open_window(folder, user)
    w.open_clip(clip)
    qtbot.waitUntil(lambda: w.viewer.frame_number is not None, timeout=10000)
    return w, p


def test_bars_show_the_suggestion_and_ctrl_space_accepts_it(qtbot, open_window, labelled):  # noqa: F811
    folder, ids = labelled
    _set(folder, "on")
    w, p = _open(qtbot, open_window, folder, ids["new"])
    qtbot.waitUntil(lambda: bool(w.suggestions.current), timeout=TRAINED)
    ranked = p.suggest(ids["new"])
    buttons = w.clip_panel.label_buttons
    assert buttons["right"].best and not buttons["left"].best
    assert buttons["right"].probability == pytest.approx(ranked[0][1])
    assert "Suggested: right" in w.clip_panel.suggestion.text()
    assert p.my_clip_label(ids["new"], "ann-2") is None  # shown, never set
    w.viewer.setFocus()
    qtbot.keyClick(w.viewer, Qt.Key.Key_Space, Qt.KeyboardModifier.ControlModifier)
    qtbot.waitUntil(lambda: p.my_clip_label(ids["new"], "ann-2") == "right", timeout=5000)
    assert p.accepted_suggestions() == {(ids["new"], "ann-2")}


def test_after_look_waits_for_the_last_frame(qtbot, open_window, labelled):  # noqa: F811
    folder, ids = labelled
    _set(folder, "after-look")
    w, p = _open(qtbot, open_window, folder, ids["new"])
    qtbot.waitUntil(lambda: w.suggestions.has_model, timeout=TRAINED)
    assert w.suggestions.current == []
    assert all(b.probability is None for b in w.clip_panel.label_buttons.values())
    assert "last frame" in w.clip_panel.suggestion.text()
    w.player.seek(w.clip.frame_count - 1)
    qtbot.waitUntil(lambda: bool(w.suggestions.current), timeout=30000)
    assert w.clip_panel.label_buttons["right"].best


def test_off_shows_nothing_and_trains_nothing(qtbot, open_window, labelled):  # noqa: F811
    folder, ids = labelled
    _set(folder, "off")
    w, p = _open(qtbot, open_window, folder, ids["new"])
    assert w.suggestions.training is None and not w.suggestions.has_model
    assert not w.clip_panel.suggestion.isVisible()
    qtbot.keyClick(w.viewer, Qt.Key.Key_Space, Qt.KeyboardModifier.ControlModifier)
    assert p.my_clip_label(ids["new"], "ann-2") is None


def test_set_up_project_decides_who_sees_suggestions_lead_only(qtbot, tmp_path):
    from clipscribe.ui.dialogs.setup import ProjectSetup
    with Project.create(tmp_path / "p") as p:
        p.add_annotator("ann-1")
        d = ProjectSetup(p)
        qtbot.addWidget(d)
        assert d.shown.currentData() == "after-look"
        d.shown.setCurrentIndex(d.shown.findData("off"))
        assert d.save_suggestions_shown()
        assert p.suggestion_visibility() == "off" and d.changed
        p.user = "ann-1"  # not a lead (the project has one now: its creator)
        d.shown.setCurrentIndex(d.shown.findData("on"))
        assert not d.save_suggestions_shown()
        assert "Not saved" in d.label_note.text() and p.suggestion_visibility() == "off"


def test_queue_least_certain_first(qtbot, open_window, labelled):  # noqa: F811
    folder, ids = labelled
    _set(folder, "on")
    w, p = _open(qtbot, open_window, folder, ids["new"])
    qtbot.waitUntil(lambda: bool(w._least_certain), timeout=TRAINED)
    box = w.queue.order
    box.setCurrentIndex(box.findData("least-certain"))
    model = w.queue_model
    expected = [c for c, _ in p.least_certain_first()]
    shown = [model.row(r).clip.id for r in range(model.rowCount())]
    assert shown[:len(expected)] == expected and sorted(shown) == sorted(c.id for c in p.clips())
    assert w.queue.select_clip(ids["new"])  # the clip on screen is found in the new order
    box.setCurrentIndex(box.findData("id"))
    assert [model.row(r).clip.id for r in range(model.rowCount())] == sorted(shown)


def test_a_failed_training_is_said_not_learning_for_ever(qtbot, open_window, labelled,  # noqa: F811
                                                         monkeypatch):
    folder, ids = labelled
    _set(folder, "on")

    def broken(self, **kw):
        raise OSError("cache folder is read-only")
    monkeypatch.setattr(Project, "train_suggester", broken)
    w, p = _open(qtbot, open_window, folder, ids["new"])
    qtbot.waitUntil(lambda: w.suggestions.training is None, timeout=30000)
    text = w.clip_panel.suggestion.text()
    assert "read-only" in text and "learning" not in text
    assert "train_suggester" not in text  # the window trains on its own: no API advice


def test_a_big_project_waits_for_features_instead_of_computing_them(qtbot, open_window,  # noqa: F811
                                                                    labelled, monkeypatch):
    from clipscribe.project import suggestions
    folder, ids = labelled
    _set(folder, "on")
    monkeypatch.setattr(suggestions, "BACKGROUND_FEATURES", -1)
    monkeypatch.setattr(Project, "train_suggester", lambda *a, **k: pytest.fail("trained"))
    w, p = _open(qtbot, open_window, folder, ids["new"])
    qtbot.waitUntil(lambda: w.suggestions.training is None, timeout=30000)
    text = w.clip_panel.suggestion.text()
    assert "Suggestions wait" in text and "--what features" in text
    assert not w.suggestions.has_model
