"""The start window (no project to open) and the workbench's open/switch loop."""

from pathlib import Path

import pytest
from PySide6.QtWidgets import QDialog

from clipscribe import Project
from clipscribe.schema.settings import SETTINGS_FILE
from clipscribe.ui import app as app_module
from clipscribe.ui.dialogs import start
from clipscribe.ui.boot import LAST_PROJECT_KEY, RECENT_MAX, recent_projects, remember_project
from clipscribe.media.copy_in import free_folder
from clipscribe.ui.dialogs.start import SAMPLE_NAME, StartWindow


def _window(qtbot, settings, *picks):
    """A start window whose folder dialog answers ``picks`` in turn."""
    answers = [str(p) for p in picks]
    win = StartWindow(settings=settings, pick=lambda caption, folder: answers.pop(0))
    qtbot.addWidget(win)
    return win


def test_free_folder_never_reuses_an_existing_one(tmp_path):
    assert free_folder(tmp_path, SAMPLE_NAME) == tmp_path / "clipscribe-sample"
    (tmp_path / "clipscribe-sample").mkdir()
    (tmp_path / "clipscribe-sample-2").mkdir()
    assert free_folder(tmp_path, SAMPLE_NAME) == tmp_path / "clipscribe-sample-3"


def test_open_folder_takes_a_project_and_refuses_anything_else(qtbot, settings, sample, tmp_path):
    win = _window(qtbot, settings, tmp_path, "", sample)
    win.open_folder()                                   # a folder holding no project
    assert win.result() != QDialog.DialogCode.Accepted and win.chosen is None
    assert "holds no clipscribe project" in win.note.text() and SETTINGS_FILE in win.note.text()
    win.open_folder()                                   # cancelled: nothing happens
    assert win.chosen is None
    win.open_folder()
    assert win.result() == QDialog.DialogCode.Accepted and win.chosen == sample


def test_new_project_is_made_off_the_ui_thread_in_an_empty_folder_only(qtbot, settings, tmp_path):
    full = tmp_path / "full"
    full.mkdir()
    (full / "notes.txt").write_text("mine")
    win = _window(qtbot, settings, full, tmp_path / "fresh")
    win.new_project()
    assert "is not empty" in win.note.text() and win.chosen is None
    assert sorted(p.name for p in full.iterdir()) == ["notes.txt"]   # untouched
    win.new_project()
    assert not win.open_button.isEnabled() and not win.progress.isHidden()  # busy meanwhile
    qtbot.waitUntil(lambda: win.chosen is not None, timeout=20000)
    assert win.chosen == tmp_path / "fresh" and win.open_button.isEnabled()
    with Project.open(win.chosen) as p:
        assert p.clips() == []


def test_sample_project_is_built_in_a_new_folder_inside_the_chosen_one(qtbot, settings, tmp_path):
    (tmp_path / "clipscribe-sample").mkdir()            # taken already: the next free name
    win = _window(qtbot, settings, tmp_path)
    win.sample_project()
    qtbot.waitUntil(lambda: win.chosen is not None, timeout=60000)
    assert win.chosen == tmp_path / "clipscribe-sample-2"
    with Project.open(win.chosen) as p:
        assert len(p.clips()) == 52  # the full sample: 12 core clips and 40 in later workcells


def test_a_failed_build_is_reported_and_the_window_stays(qtbot, settings, tmp_path, monkeypatch):
    monkeypatch.setattr(start, "_create_empty",
                        lambda folder, **kw: (_ for _ in ()).throw(OSError("disk full")))
    win = _window(qtbot, settings, tmp_path / "fresh")
    win.new_project()
    qtbot.waitUntil(lambda: "disk full" in win.note.text(), timeout=10000)
    assert win.chosen is None and win.open_button.isEnabled() and win.progress.isHidden()


def test_recent_projects_newest_first_only_those_still_there(qtbot, settings, sample, tmp_path):
    gone = tmp_path / "gone"
    remember_project(settings, gone)
    remember_project(settings, sample)
    remember_project(settings, gone)  # again: moves to the front, not twice
    assert settings.value(LAST_PROJECT_KEY) == str(gone.resolve())
    assert recent_projects(settings) == [sample.resolve()]
    win = _window(qtbot, settings)
    assert win.recent.count() == 1 and win.recent.item(0).toolTip() == str(sample.resolve())
    win.recent.itemActivated.emit(win.recent.item(0))
    assert win.chosen == sample.resolve()


def test_recent_list_is_bounded(settings, tmp_path):
    for i in range(RECENT_MAX + 3):
        remember_project(settings, tmp_path / f"p{i}")
    kept = settings.value("recentProjects")
    assert len(kept) == RECENT_MAX and kept[0] == str((tmp_path / f"p{RECENT_MAX + 2}").resolve())


@pytest.fixture
def loop(monkeypatch, qapp):
    """run() with the start window and the window itself replaced by scripted stand-ins."""
    shown, asked = [], []

    def script(choices, on_show=None):
        def choose(note=""):
            asked.append(note)
            return choices.pop(0) if choices else None

        def show(app, project, *, view, screenshot):
            shown.append(Path(project.folder))
            if on_show:
                on_show(len(shown))
            return 0
        monkeypatch.setattr(start, "choose_project", choose)
        monkeypatch.setattr(app_module, "_show", show)
    return script, shown, asked


def test_run_without_a_folder_asks_and_a_bad_choice_asks_again_with_the_reason(loop, sample, tmp_path):
    script, shown, asked = loop
    script([tmp_path / "nothing-here", sample])
    assert app_module.run(None, user="annotator-1") == 0
    assert shown == [sample]
    assert asked[0] == "" and "no clipscribe project here" in asked[1]


def test_run_closing_the_start_window_exits_cleanly(loop):
    script, shown, asked = loop
    script([])
    assert app_module.run(None, note="The project opened last, /x, is no longer there.") == 0
    assert shown == [] and asked == ["The project opened last, /x, is no longer there."]


def test_open_another_project_switches_once_the_window_closes(loop, sample, tmp_path):
    other = tmp_path / "other"
    with Project.create(other):
        pass
    script, shown, asked = loop
    script([], on_show=lambda n: start.request_switch(other) if n == 1 else None)
    assert app_module.run(sample, user="annotator-1") == 0
    assert shown == [sample, other] and asked == []
    assert start.take_switch() is None


def test_screenshot_without_a_folder_is_refused(loop, capsys):
    script, shown, asked = loop
    script([Path("/never")])
    assert app_module.run(None, screenshot="x.png") == 2
    assert asked == [] and "needs a project folder" in capsys.readouterr().err


def test_open_another_project_in_the_window_asks_the_start_window(qtbot, open_window, sample,
                                                                  tmp_path, monkeypatch):
    other = tmp_path / "other"
    with Project.create(other):
        pass

    class Chooser:
        def __init__(self, **kw):
            self.chosen = other

        def exec(self):
            return QDialog.DialogCode.Accepted
    monkeypatch.setattr(start, "StartWindow", Chooser)
    w, _ = open_window(sample, "annotator-1")
    w.actions_["open_other"].trigger()
    assert not w.isVisible()
    assert start.take_switch() == other


@pytest.mark.parametrize("key,mods,asked", [
    ("N", "Alt", "Choose an empty folder"), ("N", "Ctrl", "Choose an empty folder"),
    ("O", "Alt", "Open a clipscribe project"), ("S", "Alt", "Where should the sample project go")])
def test_start_window_buttons_answer_their_alt_letter_and_their_shortcut(qtbot, settings, key, mods, asked):
    from PySide6.QtCore import Qt
    asks = []
    win = StartWindow(settings=settings, pick=lambda caption, folder: asks.append(caption) or "")
    qtbot.addWidget(win)
    win.show()
    qtbot.waitExposed(win)
    win.activateWindow()
    qtbot.waitUntil(win.isActiveWindow, timeout=3000)
    mod = {"Alt": Qt.KeyboardModifier.AltModifier, "Ctrl": Qt.KeyboardModifier.ControlModifier}[mods]
    qtbot.keyClick(win, getattr(Qt.Key, f"Key_{key}"), mod)
    qtbot.waitUntil(lambda: bool(asks), timeout=2000)             # an Alt letter clicks after a flash
    assert len(asks) == 1 and asks[0].startswith(asked)
