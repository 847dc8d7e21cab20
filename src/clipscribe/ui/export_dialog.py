"""The dataset export dialog: choose splits and options, check for leakage, then write.

Step 1 (Check) runs :meth:`Project.plan_export` on the worker pool and shows the split counts,
the clips left out and the leakage findings; nothing is written. Step 2 (Write) runs
:meth:`Project.write_export` with the checked plan. Write stays disabled until a check made with
the settings now on screen exists, and, when that check found blocking leakage, until the lead
ticks "Write anyway" and gives a reason (recorded in the manifest as the override).
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

from PySide6.QtCore import Qt, Signal, Slot
from PySide6.QtWidgets import (
    QCheckBox, QComboBox, QDialog, QDialogButtonBox, QDoubleSpinBox, QFileDialog, QFormLayout,
    QGroupBox, QHBoxLayout, QLabel, QLineEdit, QProgressBar, QPushButton, QSpinBox, QVBoxLayout,
    QWidget,
)

from ..media import JobCancelled
from .export_results import CheckResults
from .workers import Job, JobRunner

SPLITS = (("train", "&Train", 70), ("val", "&Val", 15), ("test", "Te&st", 15))
MEDIA_MODES = (("Leave media where they are", None), ("Copy media into the export", "copy"),
               ("Hard-link media (same disk only)", "hardlink"))
NOTE_STYLE = {"info": "color: palette(text);", "ok": "color: #2e7d32;", "bad": "color: #b3261e;"}


def _plain_errors(fn):
    """Turn every failure of ``fn`` into one readable line (ValueError) or a cancel.

    The worker reports ValueError as ``"<job>: <message>"``; anything else would reach the user
    as a traceback, which this dialog never shows.
    """
    from .. import export

    def run(*, cancel, progress):
        try:
            return fn(cancel=cancel, progress=progress)
        except (JobCancelled, export.ExportCancelled):
            raise JobCancelled("cancelled") from None
        except (export.ExportError, ValueError, OSError, LookupError) as exc:
            raise ValueError(str(exc) or type(exc).__name__) from None
        except Exception as exc:  # a bug; still one line, the details stay in the exception
            raise ValueError(f"unexpected {type(exc).__name__}: {exc}") from None
    return run


class ExportDialog(QDialog):
    """Check and write a dataset export of ``project`` (leads only)."""

    exported = Signal(str, int)  # output folder, number of files written (manifest included)

    def __init__(self, project, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.project = project
        self.is_lead = project.role(project.user) == "lead"
        self.plan = None
        self.manifest = None
        self._plan_key: tuple | None = None
        self._job: Job | None = None
        self._job_name = ""
        self.runner = JobRunner(self)
        self.setWindowTitle("Export dataset")
        self.setObjectName("exportDialog")
        self.resize(860, 720)
        self._build()
        self._wire()
        if not self.is_lead:
            self._say(f"Only a lead can export a dataset; {project.user!r} is not a lead.", "bad")
        self._refresh()

    # ---- building ----------------------------------------------------------------------
    def _build(self) -> None:
        lay = QVBoxLayout(self)
        top = QHBoxLayout()
        top.addWidget(self._build_split_box(), 1)
        top.addWidget(self._build_output_box(), 1)
        lay.addLayout(top)

        row = QHBoxLayout()
        self.check_btn = QPushButton("&Check")
        self.check_btn.setToolTip("Step 1: decide labels, assign splits and look for leakage. "
                                  "Nothing is written.")
        self.cancel_btn = QPushButton("Cance&l")
        self.cancel_btn.setToolTip("Stop the check or the write now running; a cancelled write "
                                   "leaves nothing behind")
        self.progress = QProgressBar()
        self.progress.setTextVisible(True)
        self.progress.setFormat("")
        self.progress.setRange(0, 1)
        self.progress.setValue(0)
        row.addWidget(self.check_btn)
        row.addWidget(self.progress, 1)
        row.addWidget(self.cancel_btn)
        lay.addLayout(row)

        self.results = CheckResults()
        lay.addWidget(self.results, 1)

        ov = QHBoxLayout()
        self.override = QCheckBox("Write an&yway")
        self.override.setToolTip("Write despite blocking leakage findings. Your name and reason "
                                 "go into the manifest.")
        self.reason = QLineEdit()
        self.reason.setPlaceholderText("Reason for writing despite blocking findings "
                                       "(recorded in the manifest)")
        self.reason.setToolTip("Required with “Write anyway”; kept in manifest.json with your name")
        reason_label = QLabel("Reaso&n:")
        reason_label.setBuddy(self.reason)
        self.write_btn = QPushButton("&Write")
        ov.addWidget(self.override)
        ov.addWidget(reason_label)
        ov.addWidget(self.reason, 1)
        ov.addWidget(self.write_btn)
        lay.addLayout(ov)

        self.message = QLabel("")
        self.message.setObjectName("exportMessage")
        self.message.setWordWrap(True)
        self.message.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        lay.addWidget(self.message)
        self.buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        self.buttons.rejected.connect(self.reject)
        lay.addWidget(self.buttons)

    def _build_split_box(self) -> QGroupBox:
        box = QGroupBox("Splits and labels")
        form = QFormLayout(box)
        self.ratio_spins: dict[str, QSpinBox] = {}
        for name, text, value in SPLITS:
            s = QSpinBox()
            s.setRange(0, 100)
            s.setSingleStep(5)
            s.setSuffix(" %")
            s.setValue(value)
            s.setToolTip(f"Share of clips for the {name} split; 0 leaves the split out. "
                         "Shares are scaled to add up to 100 %.")
            form.addRow(text, s)
            self.ratio_spins[name] = s
        self.ratio_total = QLabel()
        form.addRow("", self.ratio_total)
        self.seed = QSpinBox()
        self.seed.setRange(0, 2_147_483_647)
        self.seed.setToolTip("Seed for placing groups into splits; the same seed and project give "
                             "the same splits")
        form.addRow("See&d", self.seed)
        self.min_agreement = QDoubleSpinBox()
        self.min_agreement.setRange(0.0, 1.0)
        self.min_agreement.setSingleStep(0.05)
        self.min_agreement.setDecimals(2)
        self.min_agreement.setValue(0.6)
        self.min_agreement.setToolTip("Without gold, the majority label must be given by at least "
                                      "this share of the clip's annotators; otherwise the clip is "
                                      "left out")
        form.addRow("Minimum a&greement", self.min_agreement)
        self.radius = QSpinBox()
        self.radius.setRange(0, 64)
        self.radius.setValue(8)
        self.radius.setToolTip("Two clips whose 64-bit fingerprints differ in at most this many "
                               "bits count as near-duplicate footage")
        form.addRow("Hamming &radius", self.radius)
        self.keep_splits = QCheckBox("&Keep clips in the split of the last export")
        self.keep_splits.setChecked(True)
        self.keep_splits.setToolTip("Clips exported before stay where they were, so a test set "
                                    "never leaks into a later training set")
        form.addRow(self.keep_splits)
        return box

    def _build_output_box(self) -> QGroupBox:
        box = QGroupBox("Output")
        form = QFormLayout(box)
        self.folder = QLineEdit(str(self.project.folder / "exports" /
                                    f"export-{datetime.now():%Y%m%d-%H%M}"))
        self.folder.setToolTip("A new or empty folder; the export appears there only when "
                               "complete")
        self.browse = QPushButton("C&hoose…")
        self.browse.setToolTip("Pick the output folder")
        row = QHBoxLayout()
        row.addWidget(self.folder, 1)
        row.addWidget(self.browse)
        label = QLabel("&Folder")
        label.setBuddy(self.folder)
        form.addRow(label, row)
        self.media = QComboBox()
        for text, mode in MEDIA_MODES:
            self.media.addItem(text, mode)
        self.media.setToolTip("Leave in place: records name the media path in the project. "
                              "Copy or hard-link: media go under media/<split>/ in the export.")
        form.addRow("&Media", self.media)
        self.webvtt = QCheckBox("&One WebVTT file per clip")
        self.webvtt.setToolTip("Also write webvtt/<clip>.vtt with the clip's segments and "
                               "captions")
        form.addRow(self.webvtt)
        self.overwrite = QCheckBox("Re&place the folder if it is not empty")
        self.overwrite.setToolTip("Replace an existing, non-empty output folder as a whole")
        form.addRow(self.overwrite)
        return box

    def _wire(self) -> None:
        for s in (*self.ratio_spins.values(), self.seed, self.radius):
            s.valueChanged.connect(self._refresh)
        self.min_agreement.valueChanged.connect(self._refresh)
        self.keep_splits.toggled.connect(self._refresh)
        self.folder.textChanged.connect(self._refresh)
        self.override.toggled.connect(self._refresh)
        self.reason.textChanged.connect(self._refresh)
        self.browse.clicked.connect(self.choose_folder)
        self.check_btn.clicked.connect(self.check)
        self.write_btn.clicked.connect(self.write)
        self.cancel_btn.clicked.connect(self.cancel)

    # ---- settings and state ------------------------------------------------------------
    def ratios(self) -> dict[str, float]:
        return {n: s.value() / 100 for n, s in self.ratio_spins.items() if s.value() > 0}

    def _key(self) -> tuple:
        return (tuple(sorted(self.ratios().items())), self.seed.value(),
                round(self.min_agreement.value(), 4), self.radius.value(),
                self.keep_splits.isChecked())

    @property
    def busy(self) -> bool:
        """A check or a write is running."""
        return self._job is not None

    @property
    def checked_current(self) -> bool:
        """A check exists and was made with the settings now on screen."""
        return self.plan is not None and self._plan_key == self._key()

    def _write_blocker(self) -> str | None:
        """Why Write is disabled, or None."""
        if not self.is_lead:
            return "only a lead can export"
        if self._job is not None:
            return "a job is running"
        if self.plan is None:
            return "run the check first"
        if not self.checked_current:
            return "settings changed since the check; check again"
        if not self.folder.text().strip():
            return "choose an output folder"
        if self.plan.leakage.blocking and not self.override.isChecked():
            return "the check found blocking leakage; tick “Write anyway” and give a reason"
        if self.plan.leakage.blocking and not self.reason.text().strip():
            return "give a reason for writing despite blocking findings"
        return None

    @Slot()
    def _refresh(self) -> None:
        busy = self._job is not None
        total = sum(s.value() for s in self.ratio_spins.values())
        self.ratio_total.setText(f"Total {total} %" if total == 100 or total == 0 else
                                 f"Total {total} % (scaled to 100 %)")
        for w in (*self.ratio_spins.values(), self.seed, self.min_agreement, self.radius,
                  self.keep_splits, self.folder, self.browse, self.media, self.webvtt,
                  self.overwrite):
            w.setEnabled(self.is_lead and not busy)
        self.check_btn.setEnabled(self.is_lead and not busy and total > 0)
        self.cancel_btn.setEnabled(busy)
        blocking = bool(self.checked_current and self.plan.leakage.blocking)
        self.override.setEnabled(blocking and not busy)
        self.reason.setEnabled(blocking and not busy and self.override.isChecked())
        why = self._write_blocker()
        self.write_btn.setEnabled(why is None)
        self.write_btn.setToolTip("Step 2: write the checked export into the folder"
                                  if why is None else f"Write is off: {why}")
        if self.plan is not None and not self.checked_current and not busy:
            self._say("Settings changed since the check; check again before writing.", "info")

    def _say(self, text: str, kind: str = "info") -> None:
        self.message.setText(text)
        self.message.setStyleSheet(NOTE_STYLE[kind])

    def _status(self, text: str) -> None:
        win = self.parent()
        if win is not None and hasattr(win, "statusBar"):
            win.statusBar().showMessage(text, 15000)

    @Slot()
    def choose_folder(self) -> None:
        start = self.folder.text().strip() or str(self.project.folder)
        chosen = QFileDialog.getExistingDirectory(self, "Output folder (new or empty)",
                                                  str(Path(start).parent))
        if chosen:
            self.folder.setText(chosen)

    # ---- jobs --------------------------------------------------------------------------
    def _start(self, name: str, fn, done) -> None:
        job = Job(name, _plain_errors(fn))
        job.signals.progress.connect(lambda d, t, n=name: self._progress(n, d, t))
        job.signals.finished.connect(lambda out: self._ended(done, out))
        job.signals.failed.connect(lambda msg: self._ended(None, msg))
        job.signals.cancelled.connect(lambda n=name: self._ended(None, None, cancelled=n))
        self._job, self._job_name = job, name
        self.progress.setRange(0, 0)
        self.progress.setFormat(f"{name}…")
        self._say(f"{name}…")
        self._refresh()
        self.runner.start(job)

    def _progress(self, name: str, done: int, total: int) -> None:
        if total <= 0:
            self.progress.setRange(0, 0)
            return
        self.progress.setRange(0, total)
        self.progress.setValue(done)
        self.progress.setFormat(f"{name}: {done} of {total}")

    def _ended(self, done, out, *, cancelled: str | None = None) -> None:
        self._job = None
        self.progress.setRange(0, 1)
        self.progress.setValue(1 if done is not None else 0)
        self.progress.setFormat(f"{self._job_name} done" if done is not None else "")
        if done is not None:
            done(out)
        elif cancelled:
            self._say(f"{cancelled} cancelled; nothing was written.", "info")
        else:
            self._say(str(out).splitlines()[0] if out else "failed", "bad")
        self._refresh()

    @Slot()
    def check(self) -> None:
        if not self.check_btn.isEnabled():
            return
        p, key = self.project, self._key()
        ratios, seed, agree, radius = self.ratios(), self.seed.value(), self.min_agreement.value(), self.radius.value()
        frozen = None if self.keep_splits.isChecked() else {}

        def work(*, cancel, progress):  # worker thread
            progress(0, 0)
            p.compute_fingerprints(progress=lambda d, t: progress(d, t), cancel=cancel)
            if cancel.is_set():
                raise JobCancelled("check cancelled")
            return p.plan_export(ratios, seed=seed, min_agreement=agree, frozen=frozen,
                                 hamming_radius=radius)

        self.plan, self._plan_key = None, None
        self.results.show_plan(None)
        self._start("Check", work, lambda plan: self._checked(plan, key))

    def _checked(self, plan, key: tuple) -> None:
        self.plan, self._plan_key = plan, key
        self.override.setChecked(False)
        self.results.show_plan(plan)
        n_block = len(plan.leakage.blocking)
        if n_block:
            self._say(f"Checked: {n_block} blocking leakage finding(s). Fix them, or tick "
                      "“Write anyway” and give a reason.", "bad")
            self.results.tabs.setCurrentWidget(self.results.leak_view)
        else:
            self._say("Checked: no blocking leakage. Nothing written yet — press Write.", "ok")

    @Slot()
    def write(self) -> None:
        if self._write_blocker() is not None:
            return
        p, plan, folder = self.project, self.plan, self.folder.text().strip()
        mode, vtt, overwrite = self.media.currentData(), self.webvtt.isChecked(), self.overwrite.isChecked()
        reason = self.reason.text().strip() if plan.leakage.blocking else None

        def work(*, cancel, progress):  # worker thread
            return p.write_export(folder, plan, media_mode=mode, webvtt=vtt,
                                  override_reason=reason, overwrite=overwrite,
                                  progress=progress, cancel=cancel)

        self._start("Write", work, lambda m: self._written(m, folder))

    def _written(self, manifest, folder: str) -> None:
        self.manifest = manifest
        files = len(manifest.files) + 1  # the listed files and manifest.json itself
        text = f"Wrote {files} files ({len(self.plan.assignment)} clips) to {folder}"
        self._say(text + ".", "ok")
        self._status(text)
        self.exported.emit(folder, files)

    @Slot()
    def cancel(self) -> None:
        if self._job is not None:
            self._job.cancel()

    def wait(self, msecs: int = 10000) -> bool:
        return self.runner.wait(msecs)

    def done(self, result: int) -> None:  # close, Esc or the Close button
        self.cancel()
        self.runner.wait(10000)
        super().done(result)


def open_export_dialog(window) -> ExportDialog | None:
    """Show the export dialog of ``window.project`` (one per window); leads only."""
    p = window.project
    if p.role(p.user) != "lead":
        window.statusBar().showMessage("Only a lead can export a dataset", 8000)
        return None
    dlg = window.findChild(ExportDialog)
    if dlg is None:
        dlg = ExportDialog(p, window)
    dlg.show()
    dlg.raise_()
    dlg.activateWindow()
    return dlg
