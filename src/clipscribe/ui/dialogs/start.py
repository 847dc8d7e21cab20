"""The start window: what the workbench shows when it has no project to open (first start from
the applications menu, or the project opened last is gone).

It offers the projects opened recently that still exist, opening a project folder, making a new
empty project, and building the invented sample project to try things out. Making a project runs
on the worker pool with a progress bar; the window only collects the answer, and
:func:`choose_project` returns the chosen folder (or None when the person closes the window).
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from PySide6.QtCore import QSettings, Qt
from PySide6.QtGui import QIcon, QKeySequence, QShortcut
from PySide6.QtWidgets import (
    QDialog, QFileDialog, QHBoxLayout, QLabel, QListWidget, QListWidgetItem, QProgressBar,
    QPushButton, QVBoxLayout, QWidget,
)

from ...media.copy_in import free_folder
from ...schema.settings import SETTINGS_FILE
from ..boot import recent_projects
from ..workers import Job, JobRunner
from .help import CautionsNote

SAMPLE_NAME = "clipscribe-sample"

#: pick(caption, start_folder) -> chosen folder, or "" when cancelled (a file dialog by default)
Pick = Callable[[str, str], str]


def _file_dialog(parent: QWidget) -> Pick:
    return lambda caption, start: QFileDialog.getExistingDirectory(parent, caption, start)


def _build_sample(folder: Path, *, cancel, progress) -> Path:  # worker thread
    from ...sample import build_sample
    progress(0, 0)
    build_sample(folder)
    return folder


def _create_empty(folder: Path, *, cancel, progress) -> Path:  # worker thread
    from ... import Project
    progress(0, 0)
    # a project a person makes checks the caption guideline at submit (warn, with override)
    with Project.create(folder, caption_guideline={"at_submit": "warn"}):
        pass
    return folder


class StartWindow(QDialog):
    """Choose or make a project; ``chosen`` holds the folder once the dialog is accepted."""

    def __init__(self, *, note: str = "", settings: QSettings | None = None,
                 pick: Pick | None = None, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("startWindow")
        self.setWindowTitle("clipscribe")
        self.setMinimumSize(600, 400)
        self.chosen: Path | None = None
        self.pick = pick or _file_dialog(self)
        self.jobs = JobRunner(self)
        self._job: Job | None = None

        head = QHBoxLayout()
        logo = QLabel()
        icon = QIcon(str(Path(__file__).with_name("assets") / "clipscribe.svg"))
        logo.setPixmap(icon.pixmap(64, 64))
        head.addWidget(logo)
        title = QLabel("<b>clipscribe</b><br>Label, segment and caption video clips, see how far "
                       "annotators agree, settle gold answers and export leakage-checked splits.")
        title.setWordWrap(True)
        head.addWidget(title, 1)

        self.note = QLabel(note)
        self.note.setObjectName("startNote")
        self.note.setWordWrap(True)
        self.note.setVisible(bool(note))

        self.recent = QListWidget()
        self.recent.setObjectName("recentProjects")
        self.recent.setAccessibleName("Recent projects")
        for folder in recent_projects(settings or QSettings()):
            item = QListWidgetItem(f"{folder.name}   ({folder.parent})")
            item.setToolTip(str(folder))
            item.setData(Qt.ItemDataRole.UserRole, str(folder))
            self.recent.addItem(item)
        self.recent.itemActivated.connect(lambda item: self._choose(Path(item.data(Qt.ItemDataRole.UserRole))))
        recent_label = QLabel("&Recent projects" if self.recent.count() else
                              "No recent projects yet.<br><br>New to clipscribe? <b>Build the "
                              "sample project</b>: an invented scene with three simulated "
                              "annotators, ready for labelling, review and export.")
        recent_label.setWordWrap(True)
        recent_label.setBuddy(self.recent)
        self.recent.setVisible(self.recent.count() > 0)

        self.open_button = self._button("&Open a project folder…", "Ctrl+O", self.open_folder,
                                        "A folder holding " + SETTINGS_FILE)
        self.new_button = self._button("&New empty project…", "Ctrl+N", self.new_project,
                                       "An empty folder becomes a project on this computer")
        self.sample_button = self._button(
            "Build the &sample project…", "Ctrl+Shift+N", self.sample_project,
            "An invented scene (a robot arm moving blocks) with three simulated annotators")
        self.cautions_button = self._button("Working with video of people", None,
                                            lambda: CautionsNote(self).exec(), "")
        self.progress = QProgressBar()
        self.progress.setObjectName("startProgress")
        self.progress.setTextVisible(False)
        self.progress.hide()

        buttons = QVBoxLayout()
        for b in (self.open_button, self.new_button, self.sample_button):
            buttons.addWidget(b)
        buttons.addStretch(1)
        buttons.addWidget(self.cautions_button)
        body = QHBoxLayout()
        left = QVBoxLayout()
        left.addWidget(recent_label)
        left.addWidget(self.recent, 1)
        if not self.recent.count():
            left.addStretch(1)
        body.addLayout(left, 3)
        body.addLayout(buttons, 2)
        lay = QVBoxLayout(self)
        lay.addLayout(head)
        lay.addWidget(self.note)
        lay.addLayout(body, 1)
        lay.addWidget(self.progress)

    def _button(self, text: str, keys: str | None, slot, tip: str) -> QPushButton:
        b = QPushButton(text)
        if keys:  # a shortcut of its own, so the button keeps its Alt+letter from the text
            QShortcut(QKeySequence(keys), self, activated=b.click)
            tip = f"{tip}  ({QKeySequence(keys).toString(QKeySequence.SequenceFormat.NativeText)})"
        b.setToolTip(tip)
        b.clicked.connect(lambda _checked=False: slot())
        return b

    # ---- the three ways in ----------------------------------------------------------------
    def open_folder(self) -> None:
        picked = self.pick("Open a clipscribe project folder", str(Path.home()))
        if not picked:
            return
        folder = Path(picked)
        if not (folder / SETTINGS_FILE).is_file():
            self.say(f"{folder} holds no clipscribe project (no {SETTINGS_FILE} in it).")
            return
        self._choose(folder)

    def new_project(self) -> None:
        picked = self.pick("Choose an empty folder for the new project", str(Path.home()))
        if not picked:
            return
        folder = Path(picked)
        if folder.exists() and any(folder.iterdir()):
            self.say(f"{folder} is not empty: choose or make an empty folder for a new project.")
            return
        self._run(f"Making a project in {folder}…", _create_empty, folder)

    def sample_project(self) -> None:
        picked = self.pick("Where should the sample project go? (a folder "
                           f"'{SAMPLE_NAME}' is made inside)", str(Path.home()))
        if not picked:
            return
        self._run("Building the sample project (about 3 seconds)…", _build_sample,
                  free_folder(Path(picked), SAMPLE_NAME))

    # ---- plumbing -------------------------------------------------------------------------
    def say(self, text: str) -> None:
        self.note.setText(text)
        self.note.setVisible(bool(text))

    def _run(self, text: str, fn, folder: Path) -> None:
        self.say(text)
        self._busy(True)
        job = Job(text, lambda *, cancel, progress: fn(folder, cancel=cancel, progress=progress))
        job.signals.progress.connect(lambda done, total: self.progress.setRange(0, total))
        job.signals.finished.connect(lambda out: (self._busy(False), self._choose(Path(out))))
        job.signals.failed.connect(lambda msg: (self._busy(False), self.say(msg.splitlines()[0])))
        self._job = self.jobs.start(job)

    def _busy(self, busy: bool) -> None:
        self.progress.setRange(0, 0)
        self.progress.setVisible(busy)
        for b in (self.open_button, self.new_button, self.sample_button):
            b.setEnabled(not busy)
        self.recent.setEnabled(not busy)

    def _choose(self, folder: Path) -> None:
        self.chosen = folder
        self.accept()

    def reject(self) -> None:
        if self._job is not None and self.jobs.pool.activeThreadCount():
            return  # a project is being written: closing now would leave half of one
        super().reject()


_switch: list[Path] = []  # the project the closing window asked to open next


def request_switch(folder: Path) -> None:
    """Ask :func:`clipscribe.ui.app.run` to open ``folder`` once the current window closes."""
    _switch[:] = [Path(folder)]


def take_switch() -> Path | None:
    """The folder asked for by :func:`request_switch` (once), or None."""
    return _switch.pop() if _switch else None


def choose_project(note: str = "", settings: QSettings | None = None) -> Path | None:
    """Show the start window; the folder to open, or None when the person closed it."""
    win = StartWindow(note=note, settings=settings)
    return win.chosen if win.exec() == QDialog.DialogCode.Accepted else None
