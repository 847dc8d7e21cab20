"""Importing a file of records (JSON Lines) or clip labels (CSV) with a progress bar.

The import runs on the worker pool through :meth:`clipscribe.Project.import_records`, all or
nothing. Its progress counts every record twice, checked then written: while records are being
checked, Cancel stops it with nothing imported; once the write has begun, Cancel is greyed out
(the write is one short transaction that either lands whole or not at all).
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt, Slot
from PySide6.QtWidgets import (
    QDialog, QDialogButtonBox, QFileDialog, QLabel, QProgressBar, QPushButton, QVBoxLayout,
    QWidget,
)

from ..workers import Job, JobRunner

FILTER = "Records or labels (*.jsonl *.json *.csv);;All files (*)"


def summary(counts: dict[str, int]) -> str:
    """What an import did, in one sentence."""
    dups = counts.get("duplicate", 0)
    done = [f"{n:,} {kind}{'s' if n != 1 else ''}" for kind, n in counts.items()
            if n and kind != "duplicate"]
    text = ("Imported " + ", ".join(done) + ".") if done else "Nothing new to import."
    if dups:
        text += f" {dups:,} repeated record{'s' if dups != 1 else ''} in the file taken once."
    return text


class ImportDialog(QDialog):
    """One import of ``path`` into ``project``; ``imported`` holds the counts when it worked."""

    def __init__(self, project, path: str | Path, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("importDialog")
        self.setWindowTitle("Import records")
        self.setMinimumWidth(520)
        self.project, self.path = project, Path(path)
        self.imported: dict[str, int] | None = None
        self.jobs = JobRunner(self)
        self._job: Job | None = None
        self._writing = False
        lay = QVBoxLayout(self)
        lay.addWidget(QLabel(f"<b>{self.path.name}</b> — all or nothing: a single bad record "
                             "and nothing is imported."))
        self.status = QLabel("Reading the file…")
        self.status.setObjectName("importStatus")
        self.status.setWordWrap(True)
        self.status.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        lay.addWidget(self.status)
        self.progress = QProgressBar()
        self.progress.setRange(0, 0)  # busy until the first count arrives
        lay.addWidget(self.progress)
        buttons = QDialogButtonBox()
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.setToolTip("Stop the import; nothing is imported")
        self.cancel_button.clicked.connect(self.cancel)
        self.close_button = QPushButton("Close")
        self.close_button.clicked.connect(self.accept)
        buttons.addButton(self.cancel_button, QDialogButtonBox.ButtonRole.RejectRole)
        buttons.addButton(self.close_button, QDialogButtonBox.ButtonRole.AcceptRole)
        self.close_button.hide()  # after addButton, which shows it
        lay.addWidget(buttons)

    @property
    def running(self) -> bool:
        return self._job is not None

    def start(self) -> Job:
        """Start the import on the worker pool (the UI thread only shows its progress)."""
        p, path = self.project, self.path
        job = Job("import", lambda *, cancel, progress: p.import_records(
            path, progress=progress, cancel=cancel))
        job.signals.progress.connect(self._progress)
        job.signals.finished.connect(self._finished)
        job.signals.failed.connect(lambda msg: self._ended(
            "Nothing was imported: " + msg.removeprefix("import: ")))
        job.signals.cancelled.connect(lambda: self._ended("Cancelled: nothing was imported."))
        self._job = self.jobs.start(job)
        return job

    @Slot(int, int)
    def _progress(self, done: int, total: int) -> None:
        records = total // 2
        self.progress.setRange(0, max(total, 1))
        self.progress.setValue(done)
        if done <= records:
            self.status.setText(f"Checking records: {done:,} of {records:,}…")
            return
        if not self._writing:  # the write has begun: it lands whole or not at all
            self._writing = True
            self.cancel_button.setEnabled(False)
            self.cancel_button.setToolTip("The records are being written; this cannot be stopped")
        self.status.setText(f"Writing records: {done - records:,} of {records:,}…")

    @Slot(object)
    def _finished(self, counts: dict[str, int]) -> None:
        self.imported = dict(counts)
        self._ended(summary(counts))

    def _ended(self, text: str) -> None:
        self._job = None
        self.status.setText(text)
        self.progress.setRange(0, 1)
        self.progress.setValue(1 if self.imported is not None else 0)
        self.cancel_button.hide()
        self.close_button.show()
        self.close_button.setDefault(True)
        self.close_button.setFocus()

    @Slot()
    def cancel(self) -> None:
        if self._job is not None and not self._writing:
            self.status.setText("Cancelling…")
            self._job.cancel()

    def reject(self) -> None:  # Escape or the window's close box
        if self._job is not None:
            self.cancel()  # the dialog closes once the worker has stopped
            return
        super().reject()


def import_into(window) -> dict[str, int] | None:
    """Ask for a file and import it into ``window.project``; the counts, or None."""
    path, _ = QFileDialog.getOpenFileName(window, "Import records or labels", "", FILTER)
    if not path:
        return None
    dialog = ImportDialog(window.project, path, window)
    dialog.start()
    dialog.exec()
    return dialog.imported
