"""The people of a project, for the lead's "Set up project" dialog: who they are and their role;
add a person, make them a lead or an annotator, and on a team server give them a login
password. Every change is one call of the project (``add_annotator``, ``set_role``,
``set_password``), each its own transaction, exactly as the CLI does it."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QComboBox, QGroupBox, QHBoxLayout, QLabel, QLineEdit, QListWidget, QListWidgetItem,
    QPushButton, QVBoxLayout, QWidget,
)

from ...errors import RecordError

ROLES = ("annotator", "lead")


class PeopleBox(QGroupBox):
    """Lists the people; ``changed`` says whether anything was saved."""

    def __init__(self, project, parent: QWidget | None = None) -> None:
        super().__init__("People", parent)
        self.project = project
        self.changed = False
        server = project.is_server
        lay = QVBoxLayout(self)
        self.list = QListWidget()
        self.list.setObjectName("peopleList")
        self.list.setAccessibleName("People of this project")
        self.list.setFixedHeight(self.fontMetrics().height() * 6)
        self.list.currentItemChanged.connect(lambda *_: self._selected())
        lay.addWidget(self.list)
        row = QHBoxLayout()
        self.toggle_button = QPushButton("Make &lead")
        self.toggle_button.clicked.connect(self.toggle_role)
        row.addWidget(self.toggle_button)
        self.password_button = QPushButton("Set pass&word")
        self.password_button.setToolTip("Give the selected person a login, or a new password, "
                                         "with the password typed below")
        self.password_button.clicked.connect(self.set_password)
        self.password_button.setVisible(server)
        row.addWidget(self.password_button)
        row.addStretch(1)
        lay.addLayout(row)
        add = QHBoxLayout()
        self.name = QLineEdit()
        self.name.setPlaceholderText("name, e.g. annotator-4")
        self.name.setAccessibleName("Name of a new person")
        self.role = QComboBox()
        self.role.addItems(list(ROLES))
        self.password = QLineEdit()
        self.password.setEchoMode(QLineEdit.EchoMode.Password)
        self.password.setPlaceholderText("login password")
        self.password.setAccessibleName("Login password")
        self.password.setVisible(server)
        self.add_button = QPushButton("Add &person")
        self.add_button.clicked.connect(self.add_person)
        self.name.returnPressed.connect(self.add_person)
        for w in (self.name, self.role, self.password, self.add_button):
            add.addWidget(w)
        lay.addLayout(add)
        self.note = QLabel("On this team server each person logs in with their own password."
                           if server else "")
        self.note.setObjectName("setupNote")
        self.note.setWordWrap(True)
        lay.addWidget(self.note)
        self.reload()

    def reload(self, select: str | None = None) -> None:
        self.list.clear()
        for person in self.project.annotators():
            item = QListWidgetItem(f"{person.name} — {person.role}")
            item.setData(Qt.ItemDataRole.UserRole, (person.name, person.role))
            self.list.addItem(item)
            if person.name == select:
                self.list.setCurrentItem(item)
        self._selected()

    def selected(self) -> tuple[str, str] | None:
        item = self.list.currentItem()
        return item.data(Qt.ItemDataRole.UserRole) if item is not None else None

    def _selected(self) -> None:
        person = self.selected()
        self.toggle_button.setEnabled(person is not None)
        self.password_button.setEnabled(person is not None)
        if person is not None:
            self.toggle_button.setText("Make a&nnotator" if person[1] == "lead" else "Make &lead")

    def _do(self, what, ok: str, select: str | None) -> bool:
        try:
            what()
        except RecordError as exc:  # refusals (the team's permission errors are RecordErrors)
            self.note.setText(f"Not saved: {exc}")
            return False
        self.changed = True
        self.note.setText(ok)
        self.reload(select)
        return True

    def add_person(self) -> bool:
        name, role = self.name.text().strip(), self.role.currentText()
        password = self.password.text() or None
        if not name:
            self.note.setText("Write the new person's name first.")
            return False
        if self._do(lambda: self.project.add_annotator(name, role=role, password=password),
                    f"Added {name} as {role}" + (" with a login." if password else "."), name):
            self.name.clear()
            self.password.clear()
            return True
        return False

    def toggle_role(self) -> bool:
        person = self.selected()
        if person is None:
            return False
        name, role = person
        new = "annotator" if role == "lead" else "lead"
        return self._do(lambda: self.project.set_role(name, new), f"{name} is now {new}.", name)

    def set_password(self) -> bool:
        person = self.selected()
        if person is None or not self.password.text():
            self.note.setText("Select a person and type the password below first.")
            return False
        password, name = self.password.text(), person[0]
        if self._do(lambda: self.project.set_password(name, password),
                    f"{name} can log in with the new password.", name):
            self.password.clear()
            return True
        return False
