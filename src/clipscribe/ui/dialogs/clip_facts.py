"""Changing the facts of clips already added — group, consent, licence, source — from Set up
project. Each save goes through ``Project.set_clip_facts`` (lead only, one edit in the history
per clip); the whole group is changed on the worker pool."""

from __future__ import annotations

from PySide6.QtCore import Slot
from PySide6.QtWidgets import (
    QCheckBox, QComboBox, QDialog, QDialogButtonBox, QFormLayout, QHBoxLayout, QLabel, QLineEdit,
    QPushButton, QVBoxLayout, QWidget,
)

from ..workers import Job, JobRunner

CONSENT = (("unknown", None), ("yes", True), ("no", False))


def save_facts(project, clips: list[int], facts: dict, *, cancel, progress) -> int:  # worker
    """Set ``facts`` on every clip of ``clips``; returns how many changed."""
    changed = 0
    for i, cid in enumerate(clips):
        if cancel.is_set():
            break
        progress(i, len(clips))
        changed += bool(project.set_clip_facts(cid, **facts))
    return changed


class ClipFactsDialog(QDialog):
    """Find a clip, read its facts, change them for it (or for every clip of its group)."""

    def __init__(self, project, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("clipFacts")
        self.setWindowTitle("Clip facts")
        self.setMinimumWidth(520)
        self.project = project
        self.clip = None
        self.jobs = JobRunner(self)
        lay = QVBoxLayout(self)
        intro = QLabel("Change the group, consent, licence or source of a clip already added. "
                       "Each change is an edit in the history (undo reverts it).")
        intro.setWordWrap(True)
        lay.addWidget(intro)
        find = QHBoxLayout()
        self.which = QLineEdit()
        self.which.setObjectName("clipToChange")
        self.which.setPlaceholderText("clip number or part of its file name")
        self.which.returnPressed.connect(self.load)
        look = QPushButton("&Find")
        look.clicked.connect(self.load)
        find.addWidget(QLabel("&Clip:", buddy=self.which))
        find.addWidget(self.which, 1)
        find.addWidget(look)
        lay.addLayout(find)
        form = QFormLayout()
        self.group, self.licence, self.source = QLineEdit(), QLineEdit(), QLineEdit()
        self.group.setPlaceholderText("none: the clip is its own group")
        self.consent = QComboBox()
        for text, value in CONSENT:
            self.consent.addItem(text, value)
        form.addRow("&Group:", self.group)
        form.addRow("C&onsent:", self.consent)
        form.addRow("&Licence:", self.licence)
        form.addRow("&Source:", self.source)
        lay.addLayout(form)
        self.whole_group = QCheckBox("&Apply to every clip of its group")
        lay.addWidget(self.whole_group)
        self.note = QLabel()
        self.note.setObjectName("setupNote")
        self.note.setWordWrap(True)
        lay.addWidget(self.note)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        self.save_button = buttons.addButton("Sa&ve facts", QDialogButtonBox.ButtonRole.ActionRole)
        self.save_button.clicked.connect(self.save)
        buttons.rejected.connect(self.reject)
        lay.addWidget(buttons)
        self._enable(False)

    def _enable(self, on: bool) -> None:
        for w in (self.group, self.consent, self.licence, self.source, self.whole_group,
                  self.save_button):
            w.setEnabled(on)

    @Slot()
    def load(self) -> None:
        found = self.project.find_clips(self.which.text().strip(), limit=1)
        if not self.which.text().strip() or not found:
            self.note.setText(f"No clip numbered or named like “{self.which.text().strip()}”.")
            self._enable(False)
            return
        self.show_clip(found[0])

    def show_clip(self, c) -> None:
        self.clip = c
        self.group.setText(c.group or "")
        self.licence.setText(c.licence or "")
        self.source.setText(c.source or "")
        self.consent.setCurrentIndex([v for _, v in CONSENT].index(c.consent))
        self.whole_group.setChecked(False)
        self.whole_group.setText(f"&Apply to every clip of group “{c.group}”" if c.group else
                                 "&Apply to every clip of its group (it has none)")
        self.whole_group.setEnabled(c.group is not None)
        self.note.setText(f"Clip {c.id}: {c.path}")
        self._enable(True)
        self.whole_group.setEnabled(c.group is not None)

    def facts(self) -> dict:
        return {"group": self.group.text().strip() or None,
                "consent": self.consent.currentData(),
                "licence": self.licence.text().strip() or None,
                "source": self.source.text().strip() or None}

    @Slot()
    def save(self) -> Job | None:
        if self.clip is None:
            return None
        clips = ([c.id for c in self.project.clips(group=self.clip.group)]
                 if self.whole_group.isChecked() and self.clip.group else [self.clip.id])
        p, facts = self.project, self.facts()
        self._enable(False)
        self.note.setText(f"Saving the facts of {len(clips)} clip(s)…")
        job = Job("clip facts", lambda *, cancel, progress: save_facts(
            p, clips, facts, cancel=cancel, progress=progress))
        job.signals.finished.connect(lambda n: self._saved(n, len(clips)))
        job.signals.failed.connect(lambda msg: self._saved(None, len(clips), msg))
        return self.jobs.start(job)

    def _saved(self, changed: int | None, of: int, why: str = "") -> None:
        if changed is None:
            self.note.setText(f"Not saved: {why.splitlines()[-1] if why else 'refused'}")
        else:
            self.note.setText(f"Saved: {changed} of {of} clip(s) changed.")
            self.clip = self.project.clip(self.clip.id)
        self._enable(True)
        self.whole_group.setEnabled(self.clip.group is not None)
