"""The dataset export dialog: choose splits and options, check for leakage, then write.

Step 1 (Check) runs :meth:`Project.plan_export` (one split by ratios) or
:meth:`Project.plan_folds` (k rotating splits) on the worker pool and shows the split counts,
the clips left out and the leakage findings of every split; nothing is written. Step 2 (Write)
runs :meth:`Project.write_export` or :meth:`Project.write_folds` (``split-1 .. split-k``, all or
nothing) with the checked plans. Write stays disabled until a check made with
the settings now on screen exists, and, when that check found blocking leakage, until the lead
ticks "Write anyway" and gives a reason (recorded in the manifest as the override).

The check never computes fingerprints: the dialog says how many clips lack one (those are not
checked for near duplicates, and the manifest counts them) and offers "Compute fingerprints",
which runs :meth:`Project.compute` on the worker pool with progress and cancel.
"""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import Qt, Signal, Slot
from PySide6.QtWidgets import (
    QCheckBox, QDialog, QDialogButtonBox, QFileDialog, QHBoxLayout, QLabel, QLineEdit,
    QMainWindow, QProgressBar, QPushButton, QVBoxLayout, QWidget,
)

from ...errors import ProjectError
from ...media import JobCancelled
from ..workers import Job, JobRunner
from .export_options import ExportOptions
from .export_results import CheckResults
#: worker processes of "Compute fingerprints" (0: on the dialog's worker thread, no Dask)
FINGERPRINT_WORKERS = 0
NOTE_STYLE = {"info": "color: palette(text);", "ok": "color: #2e7d32;", "bad": "color: #b3261e;"}


def _plain_errors(fn):
    """Turn every failure of ``fn`` into one readable line (ValueError) or a cancel.

    The worker reports ValueError as ``"<job>: <message>"``; anything else would reach the user
    as a traceback, which this dialog never shows.
    """
    from ... import export

    def run(*, cancel, progress):
        try:
            return fn(cancel=cancel, progress=progress)
        except (JobCancelled, export.ExportCancelled):
            raise JobCancelled("cancelled") from None
        except ProjectError as exc:  # a read-only, full, damaged or busy database among them
            raise ValueError((str(exc).splitlines() or [type(exc).__name__])[0]) from None
        except (export.ExportError, ValueError, OSError, LookupError) as exc:
            raise ValueError(str(exc) or type(exc).__name__) from None
        except Exception as exc:  # a bug; still one line, the details stay in the exception
            raise ValueError(f"unexpected {type(exc).__name__}: {exc}") from None
    return run


class ExportDialog(ExportOptions, QDialog):
    """Check and write a dataset export of ``project`` (leads only)."""

    exported = Signal(str, int)  # output folder, number of files written (manifest included)

    def __init__(self, project, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.project = project
        self.is_lead = project.role(project.user) == "lead"
        self.plans: list | None = None   # the checked plans: one, or one per rotating split
        self.manifest = None             # of the last single export written
        self.manifests: list = []        # of the last rotating splits written
        self._plan_key: tuple | None = None
        self._job: Job | None = None
        self._job_name = ""
        self.missing: int | None = None  # clips without a fingerprint (None: not counted yet)
        self._counting: Job | None = None
        self.runner = JobRunner(self)
        self.setWindowTitle("Export dataset")
        self.setObjectName("exportDialog")
        self.resize(860, 720)
        self._build()
        self._wire()
        if not self.is_lead:
            self._say(f"Only a lead can export a dataset; {project.user!r} is not a lead.", "bad")
        self._refresh()
        if self.is_lead:
            self.count_missing()

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

        fp = QHBoxLayout()
        self.fp_note = QLabel("Counting clips without a fingerprint…")
        self.fp_note.setObjectName("fingerprintNote")
        self.fp_note.setWordWrap(True)
        self.fp_btn = QPushButton("Compute fingerprints")
        self.fp_btn.setToolTip("Compute the perceptual fingerprint of every clip that lacks one, "
                               "so the near-duplicate check covers it; check again afterwards")
        fp.addWidget(self.fp_note, 1)
        fp.addWidget(self.fp_btn)
        lay.addLayout(fp)

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

    def _wire(self) -> None:
        for s in (*self.ratio_spins.values(), self.seed, self.radius, self.k, self.val_share):
            s.valueChanged.connect(self._refresh)
        self.folds.toggled.connect(self._refresh)
        self.min_agreement.valueChanged.connect(self._refresh)
        self.min_posterior.valueChanged.connect(self._refresh)
        self.label_rule.currentIndexChanged.connect(self._refresh)
        self.caption_policy.currentIndexChanged.connect(self._refresh)
        self.segment_rule.currentIndexChanged.connect(self._refresh)
        self.keep_splits.toggled.connect(self._refresh)
        self.folder.textChanged.connect(self._refresh)
        self.override.toggled.connect(self._refresh)
        self.reason.textChanged.connect(self._refresh)
        self.browse.clicked.connect(self.choose_folder)
        self.check_btn.clicked.connect(self.check)
        self.fp_btn.clicked.connect(self.compute_fingerprints)
        self.write_btn.clicked.connect(self.write)
        self.cancel_btn.clicked.connect(self.cancel)

    # ---- settings and state ------------------------------------------------------------
    @property
    def plan(self):
        """The checked plan of one split by ratios (None before a check, or for folds)."""
        one = self.plans is not None and self._plan_key is not None and self._plan_key[0] == "one"
        return self.plans[0] if one else None

    @property
    def blocking(self) -> int:
        """Blocking findings of the checked plans, all splits together."""
        return sum(len(pl.leakage.blocking) for pl in self.plans or [])

    @property
    def busy(self) -> bool:
        """A check or a write is running."""
        return self._job is not None

    @property
    def checked_current(self) -> bool:
        """A check exists and was made with the settings now on screen."""
        return self.plans is not None and self._plan_key == self._key()

    def _write_blocker(self) -> str | None:
        """Why Write is disabled, or None."""
        if not self.is_lead:
            return "only a lead can export"
        if self._job is not None:
            return "a job is running"
        if self.plans is None:
            return "run the check first"
        if not self.checked_current:
            return "settings changed since the check; check again"
        if not self.folder.text().strip():
            return "choose an output folder"
        if self.blocking and not self.override.isChecked():
            return "the check found blocking leakage; tick “Write anyway” and give a reason"
        if self.blocking and not self.reason.text().strip():
            return "give a reason for writing despite blocking findings"
        return None

    @Slot()
    def _refresh(self) -> None:
        busy = self._job is not None
        total = sum(s.value() for s in self.ratio_spins.values())
        self.ratio_total.setText(f"Total {total} %" if total == 100 or total == 0 else
                                 f"Total {total} % (scaled to 100 %)")
        for w, on in self._option_widgets():
            w.setEnabled(self.is_lead and not busy and on)
        self.check_btn.setEnabled(self.is_lead and not busy and (total > 0 or self.fold_mode))
        self.cancel_btn.setEnabled(busy)
        self.fp_btn.setEnabled(self.is_lead and not busy and bool(self.missing))
        self.fp_btn.setVisible(bool(self.missing))
        blocking = bool(self.checked_current and self.blocking)
        self.override.setEnabled(blocking and not busy)
        self.reason.setEnabled(blocking and not busy and self.override.isChecked())
        why = self._write_blocker()
        self.write_btn.setEnabled(why is None)
        self.write_btn.setToolTip("Step 2: write the checked export into the folder"
                                  if why is None else f"Write is off: {why}")
        if self.plans is not None and not self.checked_current and not busy:
            self._say("Settings changed since the check; check again before writing.", "info")

    def _say(self, text: str, kind: str = "info") -> None:
        self.message.setText(text)
        self.message.setStyleSheet(NOTE_STYLE[kind])

    def _status(self, text: str) -> None:
        win = self.parent()
        if isinstance(win, QMainWindow):
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
            if self._job_name == "Computing fingerprints":
                self.count_missing()  # those computed before the cancel are kept
        else:
            self._say(str(out).splitlines()[0] if out else "failed", "bad")
        self._refresh()

    @Slot()
    def check(self) -> None:
        if not self.check_btn.isEnabled():
            return
        p, key = self.project, self._key()
        ratios, seed, agree, radius = self.ratios(), self.seed.value(), self.min_agreement.value(), self.radius.value()
        captions, segments = self.caption_policy.currentData(), self.segment_rule.currentData()
        rule = dict(labels=self.label_rule.currentData(),
                    min_posterior=round(self.min_posterior.value(), 4))
        frozen = None if self.keep_splits.isChecked() else {}
        k, val = (self.k.value(), self.val_share.value() / 100) if self.fold_mode else (0, 0.0)

        def work(*, cancel, progress):  # worker thread; fingerprints are not computed here
            progress(0, 0)
            if k:
                return p.plan_folds(k, seed=seed, val_fraction=val, min_agreement=agree,
                                    hamming_radius=radius, captions=captions, segments=segments,
                                    **rule)
            return [p.plan_export(ratios, seed=seed, min_agreement=agree, frozen=frozen,
                                  hamming_radius=radius, captions=captions,
                                  segments=segments, **rule)]

        self.plans, self._plan_key = None, None
        self.results.show_plans(None)
        self._start("Check", work, lambda plans: self._checked(plans, key))

    # ---- fingerprints ------------------------------------------------------------------
    def count_missing(self) -> Job:
        """Count the clips without a fingerprint in the background; the note and the button
        follow. Only the newest count is shown."""
        p = self.project
        job = self._counting = Job("Counting fingerprints", _plain_errors(
            lambda cancel, progress: p.missing_fingerprints()))
        job.signals.finished.connect(lambda n, j=job: self._counted(j, n))
        job.signals.failed.connect(lambda msg, j=job: j is self._counting and self.fp_note.setText(
            f"Could not count the clips without a fingerprint: {msg}"))
        return self.runner.start(job)

    def _counted(self, job: Job, n: int) -> None:
        if job is not self._counting:
            return  # an older count
        self.missing = n
        self.fp_note.setText(
            "Every clip has a fingerprint: the near-duplicate check covers them all." if not n
            else f"{n} clip(s) have no fingerprint: the check will report them as not checked "
                 "for near duplicates (counted in the manifest). Compute them first to check "
                 "them too.")
        self.fp_note.setStyleSheet(NOTE_STYLE["ok" if not n else "bad"])
        self._refresh()

    @Slot()
    def compute_fingerprints(self) -> None:
        """Compute the missing fingerprints through the compute path, with progress and cancel;
        a check made before is dropped (its near-duplicate findings are out of date)."""
        if not self.fp_btn.isEnabled():
            return
        p = self.project

        def work(*, cancel, progress):  # worker thread
            return p.compute(["fingerprint"], workers=FINGERPRINT_WORKERS, progress=progress,
                             cancel=cancel)

        self._start("Computing fingerprints", work, self._fingerprinted)

    def _fingerprinted(self, rep) -> None:
        failed = f"; {len(rep.failed)} could not be read" if rep.failed else ""
        self.plans, self._plan_key = None, None
        self.results.show_plans(None)
        self._say(f"Computed {rep.computed} fingerprint(s){failed}. Check again.",
                  "bad" if rep.failed else "ok")
        self.count_missing()

    def _checked(self, plans: list, key: tuple) -> None:
        self.plans, self._plan_key = plans, key
        self.override.setChecked(False)
        self.results.show_plans(plans, folds=key[0] == "folds")
        n_block = self.blocking
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
        p, plans, folder = self.project, self.plans, self.folder.text().strip()
        mode, vtt, overwrite = self.media.currentData(), self.webvtt.isChecked(), self.overwrite.isChecked()
        reason = self.reason.text().strip() if self.blocking else None
        folds = self._plan_key[0] == "folds"

        def work(*, cancel, progress):  # worker thread
            if folds:
                return p.write_folds(folder, plans, media_mode=mode, webvtt=vtt,
                                     override_reason=reason, progress=progress, cancel=cancel)
            return p.write_export(folder, plans[0], media_mode=mode, webvtt=vtt,
                                  override_reason=reason, overwrite=overwrite,
                                  progress=progress, cancel=cancel)

        self._start("Write", work, lambda m: self._written(m, folder, folds))

    def _written(self, written, folder: str, folds: bool) -> None:
        manifests = written if folds else [written]
        if folds:
            self.manifests = manifests
        else:
            self.manifest = written
        files = sum(len(m.files) + 1 for m in manifests)  # listed files and each manifest.json
        clips = len(self.plans[0].assignment)
        text = (f"Wrote {len(manifests)} rotating splits ({files} files, {clips} clips each) "
                f"to {folder}" if folds else f"Wrote {files} files ({clips} clips) to {folder}")
        if getattr(self.project, "last_export_cleaned", None):
            text += (f"; removed {len(self.project.last_export_cleaned)} unfinished folder(s) "
                     "an earlier, stopped export left there")
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
