"""Logging in to a project on a database server: when no password is at hand (none passed,
no CLIPSCRIBE_PASSWORD, nothing in ~/.pgpass) the server refuses the first connection, and the
workbench asks for the login name and password in a small dialog, then tries again."""

from __future__ import annotations

import html
import os
from collections.abc import Callable
from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QDialog, QDialogButtonBox, QFormLayout, QLabel, QLineEdit, QVBoxLayout, QWidget,
)
from ... import Project
from ...errors import LoginRequired

#: ask(folder, user, reason) -> (user, password), or None when the person cancels
Ask = Callable[[Path, str, str], "tuple[str, str] | None"]


class LoginDialog(QDialog):
    """Login name (prefilled) and password for one project on a server."""

    def __init__(self, folder: Path, user: str, reason: str = "",
                 parent: QWidget | None = None, *, server: str | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("Log in to the project server")
        self.setObjectName("loginDialog")
        self.setMinimumWidth(420)
        lay = QVBoxLayout(self)
        intro = QLabel(f"The project in <b>{folder}</b> is kept on a database server. "
                       "Log in with the name and password your lead gave you.")
        intro.setWordWrap(True)
        lay.addWidget(intro)
        # the folder's settings name the server; a folder edited to point elsewhere shows here
        self.server = QLabel(f"Server: <b>{html.escape(server or 'unknown')}</b>")
        self.server.setObjectName("loginServer")
        self.server.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        lay.addWidget(self.server)
        self.reason = QLabel(reason)
        self.reason.setObjectName("captionNote")
        self.reason.setWordWrap(True)
        self.reason.setVisible(bool(reason))
        lay.addWidget(self.reason)
        form = QFormLayout()
        self.user = QLineEdit(user)
        self.user.setAccessibleName("Login name")
        self.password = QLineEdit()
        self.password.setEchoMode(QLineEdit.EchoMode.Password)
        self.password.setAccessibleName("Password")
        form.addRow("&Name:", self.user)
        form.addRow("&Password:", self.password)
        lay.addLayout(form)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Ok
                                   | QDialogButtonBox.StandardButton.Cancel)
        buttons.button(QDialogButtonBox.StandardButton.Ok).setText("Log in")
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        lay.addWidget(buttons)
        (self.password if user else self.user).setFocus()

    def answer(self) -> tuple[str, str]:
        return self.user.text().strip(), self.password.text()


def ask_with_dialog(folder: Path, user: str, reason: str) -> tuple[str, str] | None:
    dlg = LoginDialog(folder, user, reason, server=Project.server_of(folder))
    return dlg.answer() if dlg.exec() == QDialog.DialogCode.Accepted else None


def open_project(folder: str | os.PathLike, *, user: str | None = None,
                 password: str | None = None, ask: Ask | None = ask_with_dialog) -> Project | None:
    """``Project.open``, asking for a login while the server wants a password. Returns None
    when the person cancels; other failures (and a refusal with ``ask`` None) raise."""
    folder = Path(folder)
    password = password or os.environ.get("CLIPSCRIBE_PASSWORD") or None
    reason = ""
    while True:
        try:
            return Project.open(folder, user=user, password=password)
        except LoginRequired as exc:
            if ask is None:
                raise
            if exc.refused:  # a password was tried and turned down
                reason = "The server refused that name and password. Try again."
        answer = ask(folder, user or Project.local_user_name(), reason)
        if answer is None:
            return None
        user, password = answer[0] or None, answer[1] or None
