"""Setting a project up without the command line: its label set, its videos (those already in
the media folder, or a folder copied in from elsewhere) and its people. For leads; the work runs on the
worker pool with progress and cancel, and everything goes through the project's own methods
(``define_labels``, ``copy_media_in``, ``add_media``), as the CLI does."""

from __future__ import annotations

import html
from pathlib import Path

from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QCheckBox, QComboBox, QDialog, QDialogButtonBox, QFileDialog, QFormLayout, QGroupBox,
    QHBoxLayout, QLabel, QMessageBox, QPlainTextEdit, QProgressBar, QPushButton, QSpinBox,
    QVBoxLayout, QWidget,
)

from ...errors import RecordError
from ...schema.settings import label_line, label_specs, parse_label_line
from ...types import BY_FOLDER
from ..workers import Job, JobRunner
from .people import PeopleBox

#: what submitting captions that miss the guideline does (``caption_guideline.at_submit``)
AT_SUBMIT = (("no check", "off"), ("override", "warn"), ("refuse", "block"))
#: who sees label suggestions in the workbench (the lead decides; see Project.set_suggestion_visibility)
SHOWN = (("never", "off"), ("after their first look", "after-look"), ("at once", "on"))
ANCHORING_NOTE = ("A suggestion can anchor people: those who see one tend to take it. It is "
                  "never set automatically, and accepted ones are marked in the history.")
#: how clips get their group (the unit kept on one side of a split): label -> add_media pattern
GROUPINGS = {
    "their folder (one folder per source video or person)": BY_FOLDER,
    "nothing (each clip is its own group)": None,
}


#: what the progress bar says in each phase of adding videos (``%p``, ``%v``, ``%m``: Qt's
#: percent, value and maximum)
PHASES = {"copying": "Copying the videos… %p%",
          "reading": "Reading the videos: %v of %m"}


def ingest(project, source: Path | None, pattern: str | None, *, cancel, progress,
           phase=None):  # worker
    """Copy ``source`` in first when given, then add every new video of that folder (or of
    the whole media folder). ``phase(name)`` is called as each phase of :data:`PHASES`
    starts. Returns (folder added, IngestReport)."""
    folder = project.media_root
    if source is not None:
        if phase is not None:
            phase("copying")
        folder = project.copy_media_in(source, cancel=cancel, progress=progress)
    if phase is not None:
        phase("reading")
    return folder, project.add_media(folder, group_pattern=pattern, progress=progress)


def ask_unsaved(parent, what: str) -> str:
    """"save", "discard" or "stay" for unsaved edits of ``what`` on closing."""
    box = QMessageBox(QMessageBox.Icon.Question, "Unsaved changes",
                      f"The {what} you changed are not saved.", parent=parent)
    save = box.addButton("Save", QMessageBox.ButtonRole.AcceptRole)
    drop = box.addButton("Discard", QMessageBox.ButtonRole.DestructiveRole)
    box.addButton("Keep editing", QMessageBox.ButtonRole.RejectRole)
    box.setDefaultButton(save)
    box.exec()
    return {save: "save", drop: "discard"}.get(box.clickedButton(), "stay")


def _note(layout) -> QLabel:
    """A wrapped line under a part of the dialog saying how its last action went."""
    note = QLabel()
    note.setObjectName("setupNote")
    note.setWordWrap(True)
    layout.addWidget(note)
    return note


class ProjectSetup(QDialog):
    """Labels, videos and people of one project; ``changed`` says whether anything was saved."""

    #: a phase of adding videos began (emitted from the worker, delivered on the UI thread)
    phaseStarted = Signal(str)

    def __init__(self, project, parent: QWidget | None = None, *, pick=None, ask=None) -> None:
        super().__init__(parent)
        self.setObjectName("projectSetup")
        self.setWindowTitle("Set up the project")
        self.setMinimumWidth(820)
        self.project = project
        self._changed = False
        self.pick = pick or (lambda caption: QFileDialog.getExistingDirectory(self, caption))
        self.ask = ask or (lambda what: ask_unsaved(self, what))
        self.jobs = JobRunner(self)
        self._job: Job | None = None
        self.phaseStarted.connect(self._phase)
        lay = QVBoxLayout(self)
        lay.addWidget(self._labels_box())
        lay.addWidget(self._captions_box())
        lay.addWidget(self._videos_box())
        self.people = PeopleBox(project)
        lay.addWidget(self.people)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.reject)
        lay.addWidget(buttons)
        # Return in a field belongs to that field (the person's name adds the person), never
        # to whichever button happens to be the dialog's default
        for b in self.findChildren(QPushButton):
            b.setAutoDefault(False)
            b.setDefault(False)
        # the wrapped notes make the layout's own minimum too small: the label list would then
        # run under the row below it
        self.setMinimumHeight(self.sizeHint().height())

    @property
    def changed(self) -> bool:
        """Whether anything was saved (labels, videos or people): the window then reopens."""
        return self._changed or self.people.changed

    # ---- labels ---------------------------------------------------------------------------
    def _labels_box(self) -> QGroupBox:
        box = QGroupBox("Labels")
        lay = QVBoxLayout(box)
        intro = QLabel("One label per line, in button order, with its key and colour if you "
                       "like: <code>stack [k] #6a4c93</code> (no key: the next free of 1–9, 0, "
                       "then letters). A label taken off the list is retired, kept in the history.")
        intro.setWordWrap(True)
        lay.addWidget(intro)
        self.label_text = QPlainTextEdit(self._saved_label_text())
        self.label_text.setTabChangesFocus(True)
        self.label_text.setObjectName("labelList")
        self.label_text.setAccessibleName("Labels, one per line")
        self.label_text.setPlaceholderText("pick up\nput down\n…")
        self.label_text.setFixedHeight(self.fontMetrics().height() * 6)
        lay.addWidget(self.label_text)
        row = QHBoxLayout()
        self.ordinal = QCheckBox("The labels are &ordered (weighted kappa applies)")
        self.ordinal.setChecked(self.project.labels_ordinal())
        row.addWidget(self.ordinal, 1)
        self._suggestions_control(row)
        self.save_labels_button = QPushButton("&Save labels")
        self.save_labels_button.clicked.connect(self.save_labels)
        row.addWidget(self.save_labels_button)
        lay.addLayout(row)
        self.label_note = _note(lay)
        return box

    def _saved_label_text(self) -> str:
        return "\n".join(label_line(lab) for lab in self.project.labels())

    def label_names(self) -> list[str]:
        return [parse_label_line(line)["name"] for line in self.label_text.toPlainText().splitlines()
                if line.strip()]

    @property
    def labels_unsaved(self) -> bool:
        """Whether the label list or the ordered box differ from what the project holds."""
        lines = [line for line in self.label_text.toPlainText().splitlines() if line.strip()]
        now = [parse_label_line(line) for line in lines]
        known = {lab.name: lab for lab in self.project.labels()}
        held = [{"name": lab.name, "key": lab.key, "colour": lab.colour} for lab in known.values()]
        mine = [{"name": d["name"], "key": d.get("key", getattr(known.get(d["name"]), "key", None)),
                 "colour": d.get("colour", getattr(known.get(d["name"]), "colour", None))} for d in now]
        return mine != held or self.ordinal.isChecked() != self.project.labels_ordinal()

    def save_labels(self) -> bool:
        lines = [parse_label_line(line) for line in self.label_text.toPlainText().splitlines()
                 if line.strip()]
        if not lines:
            self.label_note.setText("Write at least one label.")
            return False
        if not self.labels_unsaved:
            self.label_note.setText(f"Nothing to save: the labels are as stored (label set "
                                    f"v{self.project.label_set_version()}).")
            return True
        specs = label_specs([line for line in self.label_text.toPlainText().splitlines()
                             if line.strip()], self.project.labels())
        names = [d["name"] for d in lines]
        try:
            self.project.define_labels(specs, ordinal=self.ordinal.isChecked())
        except RecordError as exc:
            self.label_note.setText(f"Not saved: {exc}")
            return False
        self._changed = True
        keys = ", ".join(f"{lab.name} [{lab.key}]" for lab in self.project.labels() if lab.key)
        self.label_note.setText(f"Saved {len(names)} labels (label set "
                                f"v{self.project.label_set_version()}). Keys: {keys}")
        self.label_text.setPlainText(self._saved_label_text())
        return True

    # ---- caption rules --------------------------------------------------------------------
    def _captions_box(self) -> QGroupBox:
        box = QGroupBox("Captions")
        lay = QVBoxLayout(box)
        row = QHBoxLayout()
        g = self.project.settings.caption_guideline
        self.per_clip, self.min_words, self.max_words = QSpinBox(), QSpinBox(), QSpinBox()
        for spin, (lo, hi), value, text in (
                (self.per_clip, (1, 50), g.captions_per_clip, "Capt&ions per clip:"),
                (self.min_words, (0, 200), g.min_words, "&Fewest words:"),
                (self.max_words, (1, 400), g.max_words, "&Most words:")):
            spin.setRange(lo, hi)
            spin.setValue(value)
            lab = QLabel(text)
            lab.setBuddy(spin)
            row.addWidget(lab)
            row.addWidget(spin)
        self.at_submit = QComboBox()
        self.at_submit.setObjectName("atSubmit")
        for text, value in AT_SUBMIT:
            self.at_submit.addItem(text, value)
        self.at_submit.setCurrentIndex([v for _, v in AT_SUBMIT].index(g.at_submit))
        self.at_submit.setToolTip("What submitting a clip whose captions miss these rules does: "
                                  "no check; override: ask for a reason to submit anyway (kept "
                                  "in the edit history); refuse")
        lab = QLabel("At s&ubmit:")
        lab.setBuddy(self.at_submit)
        row.addWidget(lab)
        row.addWidget(self.at_submit)
        row.addStretch(1)
        self.save_rules_button = QPushButton("Save &rules")
        self.save_rules_button.clicked.connect(self.save_caption_rules)
        row.addWidget(self.save_rules_button)
        lay.addLayout(row)
        self.rules_note = _note(lay)
        return box

    @property
    def rules_unsaved(self) -> bool:
        g = self.project.settings.caption_guideline
        return (self.per_clip.value(), self.min_words.value(), self.max_words.value(),
                self.at_submit.currentData()) != (
            g.captions_per_clip, g.min_words, g.max_words, g.at_submit)

    def save_caption_rules(self) -> bool:
        if not self.rules_unsaved:
            self.rules_note.setText("Nothing to save: the caption rules are as stored.")
            return True
        try:
            self.project.set_caption_rules(captions_per_clip=self.per_clip.value(),
                                           min_words=self.min_words.value(),
                                           max_words=self.max_words.value(),
                                           at_submit=self.at_submit.currentData())
        except RecordError as exc:
            self.rules_note.setText(f"Not saved: {exc}")
            return False
        self._changed = True
        self.rules_note.setText(f"Saved: {self.per_clip.value()} captions per clip, "
                                f"{self.min_words.value()}–{self.max_words.value()} words each; "
                                f"at submit: {self.at_submit.currentText()}.")
        return True

    # ---- label suggestions ----------------------------------------------------------------
    def _suggestions_control(self, row: QHBoxLayout) -> None:
        """Who sees label suggestions (saved at once; the note under the labels answers)."""
        self.shown = QComboBox()
        self.shown.setObjectName("suggestionsShown")
        for text, value in SHOWN:
            self.shown.addItem(text, value)
        self.shown.setCurrentIndex([v for _, v in SHOWN].index(self.project.suggestion_visibility()))
        self.shown.setToolTip(ANCHORING_NOTE)
        lab = QLabel("Annotators see suggestions:")
        lab.setBuddy(self.shown)
        lab.setToolTip(ANCHORING_NOTE)
        row.addWidget(lab)
        row.addWidget(self.shown)
        self.shown.activated.connect(self.save_suggestions_shown)

    def save_suggestions_shown(self) -> bool:
        try:
            self.project.set_suggestion_visibility(self.shown.currentData())
        except RecordError as exc:  # a refusal to a non-lead is one too
            self.label_note.setText(f"Not saved: {exc}")
            return False
        self._changed = True
        self.label_note.setText(f"Saved: annotators see label suggestions "
                                f"{self.shown.currentText()}. {ANCHORING_NOTE}")
        return True

    # ---- videos ---------------------------------------------------------------------------
    def _videos_box(self) -> QGroupBox:
        box = QGroupBox("Videos")
        lay = QVBoxLayout(box)
        self.video_count = QLabel()
        self.video_count.setWordWrap(True)
        self.video_count.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        lay.addWidget(self.video_count)
        form = QFormLayout()
        self.grouping = QComboBox()
        self.grouping.addItems(list(GROUPINGS))
        self.grouping.setToolTip("Clips of one group always land in the same split, so that no "
                                 "source video or person is on both sides of train and test")
        form.addRow("&Group clips by:", self.grouping)
        lay.addLayout(form)
        row = QHBoxLayout()
        self.scan_button = QPushButton("&Add the videos in the media folder")
        self.scan_button.clicked.connect(lambda: self._ingest(None))
        self.copy_button = QPushButton("&Copy in a folder of videos…")
        self.copy_button.setToolTip("The videos are copied into a new folder of the media folder, "
                                    "then added; the originals are not touched")
        self.copy_button.clicked.connect(self.copy_in)
        self.facts_button = QPushButton("C&hange clip facts…")
        self.facts_button.setToolTip("Group, consent, licence and source of clips already added")
        self.facts_button.clicked.connect(self.change_facts)
        row.addWidget(self.scan_button)
        row.addWidget(self.copy_button)
        row.addWidget(self.facts_button)
        lay.addLayout(row)
        bar = QHBoxLayout()
        self.progress = QProgressBar()
        self.progress.setObjectName("setupProgress")
        self.progress.hide()
        self.cancel_button = QPushButton("Cancel")
        self.cancel_button.hide()
        self.cancel_button.clicked.connect(self.cancel)
        bar.addWidget(self.progress, 1)
        bar.addWidget(self.cancel_button)
        lay.addLayout(bar)
        self.video_note = _note(lay)
        self._count()
        return box

    def _count(self) -> None:
        n = self.project.clip_count()
        self.video_count.setText(f"{n} clip{'s' if n != 1 else ''} in this project. Its media "
                                 f"folder is <b>{self.project.media_root}</b>.")

    def change_facts(self) -> None:
        from .clip_facts import ClipFactsDialog
        ClipFactsDialog(self.project, self).exec()

    def copy_in(self) -> None:
        picked = self.pick("Choose a folder of videos to copy into the project")
        if picked:
            self._ingest(Path(picked))

    def _ingest(self, source: Path | None) -> None:
        pattern = GROUPINGS[self.grouping.currentText()]
        self.video_note.setText(f"Copying the videos of {source}…" if source else
                                "Adding the videos of the media folder…")
        self._busy(True)
        p = self.project
        job = Job("adding videos",
                  lambda *, cancel, progress: ingest(p, source, pattern, cancel=cancel,
                                                     progress=progress,
                                                     phase=self.phaseStarted.emit))
        job.signals.progress.connect(self._progress)
        job.signals.finished.connect(self._done)
        job.signals.failed.connect(lambda msg: self._ended(f"Not added: {msg.splitlines()[-1]}"))
        job.signals.cancelled.connect(lambda: self._ended("Cancelled: nothing was copied."))
        self._job = self.jobs.start(job)

    def _phase(self, name: str) -> None:
        self.progress.setRange(0, 0)  # busy until the phase reports its first step
        self.progress.setFormat(PHASES[name])
        self.progress.setTextVisible(True)
        if name == "reading":
            self.video_note.setText("Reading the videos (frame count, frame index, checksum)…")

    def _progress(self, done: int, total: int) -> None:
        self.progress.setRange(0, max(total, 1))
        self.progress.setValue(done)

    def _done(self, out) -> None:
        folder, rep = out
        self._changed = self._changed or bool(rep.added)
        lines = [f"Added {len(rep.added)} clip(s) from {folder}; {len(rep.already_present)} "
                 f"already present; {len(rep.skipped)} skipped."]
        lines += [f"Skipped {path}: {why}" for path, why in rep.skipped[:8]]
        if len(rep.skipped) > 8:
            lines.append(f"… and {len(rep.skipped) - 8} more")
        warn = rep.warnings()
        lines += [f"Exact copy: {html.escape(w)}" for w in warn[:8]]
        if len(warn) > 8:
            lines.append(f"… and {len(warn) - 8} more exact copies")
        self._ended("<br>".join(lines))

    def _ended(self, text: str) -> None:
        self._busy(False)
        self.video_note.setText(text)
        self._count()

    def _busy(self, busy: bool) -> None:
        self.progress.setVisible(busy)
        self.progress.setRange(0, 0)
        self.cancel_button.setVisible(busy)
        for w in (self.scan_button, self.copy_button, self.save_labels_button, self.grouping,
                  self.facts_button):
            w.setEnabled(not busy)

    def cancel(self) -> None:
        if self._job is not None:
            self._job.cancel()

    def reject(self) -> None:
        if not self.progress.isHidden():  # finish or cancel the copy first: nothing half-done
            self.video_note.setText("Videos are being added: wait, or press Cancel first.")
            return
        what = [w for w, on in (("labels", self.labels_unsaved),
                                ("caption rules", self.rules_unsaved)) if on]
        if what:
            answer = self.ask(" and ".join(what))
            if answer == "stay":
                return
            if answer == "save" and not ((not self.labels_unsaved or self.save_labels())
                                         and (not self.rules_unsaved or self.save_caption_rules())):
                return  # refused: the note says why, and the dialog stays
        super().reject()
