"""The workbench on a project kept on PostgreSQL: the login dialog when no password is at hand,
an annotator's keys and typing reaching the server, and blind mode in a second window."""

from __future__ import annotations

import os

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # before Qt is imported anywhere

import pytest  # noqa: E402
from PySide6.QtCore import QSettings, Qt  # noqa: E402

from clipscribe.ui.workbench.queue_model import ClipIdRole  # noqa: E402

from .conftest import add_clips  # noqa: E402

pytestmark = pytest.mark.postgres
TEXT = "a hand lifts the cup off the table"


@pytest.fixture
def gui(open_window, tmp_path, monkeypatch):
    """Open the workbench as someone, logging in through ``ask``; closes it afterwards."""
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "cache"))  # thumbnails, motion curves
    monkeypatch.delenv("CLIPSCRIBE_PASSWORD", raising=False)
    from clipscribe.ui.dialogs.login import open_project

    def make(folder, user, ask):
        return open_window(folder, user, opener=lambda f, u: open_project(f, user=u, ask=ask),
                           settings=QSettings(str(tmp_path / f"{user}.ini"), QSettings.Format.IniFormat))
    return make


@pytest.fixture
def team(server_project, uid):
    p = server_project
    add_clips(p, 3)
    ann, bob = f"ann_{uid}", f"bob_{uid}"
    p.add_annotator(ann, password="pw-ann")
    p.add_annotator(bob, password="pw-bob")
    p.set_blind(True)
    return p, ann, bob


def test_login_dialog_prefills_the_name_and_hides_the_password(qtbot, tmp_path):
    from clipscribe.ui.app import application
    from clipscribe.ui.dialogs.login import LoginDialog
    from PySide6.QtWidgets import QLineEdit
    application()
    dlg = LoginDialog(tmp_path, "ann", "The server refused that name and password. Try again.")
    qtbot.addWidget(dlg)
    assert dlg.user.text() == "ann" and dlg.password.echoMode() == QLineEdit.EchoMode.Password
    assert dlg.reason.isVisibleTo(dlg)
    qtbot.keyClicks(dlg.password, "pw-ann")
    assert dlg.answer() == ("ann", "pw-ann")


def test_cancelled_login_opens_nothing(team, gui):
    p, ann, _ = team
    asked = []
    w, _ = gui(p.folder, ann, lambda folder, user, reason: asked.append(user))
    assert w is None and asked == [ann]  # the server wanted a password; the person cancelled


def test_cancelling_the_login_of_clipscribe_open_exits_0(team, monkeypatch):
    import clipscribe.ui.dialogs.login as login
    from clipscribe.ui.app import run
    p, ann, _ = team
    monkeypatch.delenv("CLIPSCRIBE_PASSWORD", raising=False)
    asked = []
    monkeypatch.setattr(login, "ask_with_dialog", lambda *a: asked.append(a) and None)
    assert run(p.folder, user=ann) == 0 and len(asked) == 1


def test_reopening_the_same_project_keeps_the_login_it_asked_for(team, monkeypatch):
    """After Set up project the window reopens on the same project: the password the login
    dialog gave is used again, not asked for twice; another project starts afresh."""
    import clipscribe.ui.app as app_module
    import clipscribe.ui.dialogs.login as login
    from clipscribe.ui.dialogs import start
    p, ann, _ = team
    monkeypatch.delenv("CLIPSCRIBE_PASSWORD", raising=False)
    asked, shown = [], []
    monkeypatch.setattr(login, "ask_with_dialog",
                        lambda folder, user, reason: asked.append(user) or (user, "pw-ann"))

    def show(app, project, *, view, screenshot):
        shown.append(project.user)
        if len(shown) == 1:
            start.request_switch(project.folder)  # what Set up project does after a change
        return 0
    monkeypatch.setattr(app_module, "_show", show)
    assert app_module.run(p.folder, user=ann) == 0
    assert shown == [ann, ann] and asked == [ann]


def test_annotator_work_reaches_the_lead_and_blind_mode_hides_it(qtbot, team, gui):
    p, ann, bob = team
    asked = []

    def ask(folder, user, reason):
        asked.append((user, reason))
        return (user, "wrong") if len(asked) == 1 else (user, "pw-ann")

    w, a = gui(p.folder, ann, ask)
    assert [u for u, _ in asked] == [ann, ann]      # asked, refused once, asked again
    assert asked[0][1] == "" and "refused" in asked[1][1]
    assert a.is_server and a.user == ann
    qtbot.waitExposed(w)
    w.activateWindow()
    w.viewer.setFocus()
    qtbot.waitUntil(lambda: w.viewer.frame_number is not None, timeout=10000)
    clip = w.clip.id
    key = next(l for l in w.label_infos if l.key)
    qtbot.keyClick(w.viewer, key.key)                # label by key
    assert w.save_state.text().startswith("Saved ")
    edit = w.captions.slots[0].edit
    edit.setFocus()
    qtbot.keyClicks(edit, TEXT)
    qtbot.keyClick(edit, Qt.Key.Key_Return)         # saved at once
    assert w.save_state.text().startswith("Saved ")
    # the lead's own connection sees both
    assert (clip, ann, key.name) in p.clip_labels()
    assert (clip, ann, TEXT) in p.captions()

    # a second annotator, blind: none of the first's work on the same clip
    w2, b = gui(p.folder, bob, lambda folder, user, reason: (user, "pw-bob"))
    w2.open_clip(clip)
    assert [s.edit.text() for s in w2.captions.slots] == [""] * len(w2.captions.slots)
    assert w2.clip_panel.current.text() != f"Your label: {key.name}"
    assert b.my_clip_label(clip) is None and b.captions() == [] and b.clip_labels() == []
    m = w2.queue_model
    row = next(r for r in range(m.rowCount()) if m.index(r, 0).data(ClipIdRole) == clip)
    assert not m.index(row, 2).data()                # "your label" column: bob's own, none
