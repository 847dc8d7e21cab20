"""The agreement board: per-label alpha with intervals, the pairwise kappa heat map, a confusion
heat map per annotator pair, caption consensus, throughput and the trend, drawn from the same
figure shapes as the HTML report. Numbers are computed off the UI thread; hovering (or tabbing
to) a figure shows the values and their recipes in the details pane."""

from __future__ import annotations

import time

from PySide6.QtCore import QEvent, Qt, Signal, Slot
from PySide6.QtWidgets import (
    QComboBox, QGridLayout, QHBoxLayout, QLabel, QPlainTextEdit, QProgressBar, QPushButton,
    QScrollArea, QVBoxLayout, QWidget,
)

from ...media import JobCancelled
from ...review_report.board import (
    BOARD_PARTS, board_data, board_figures, board_parts, confusion_figure, throughput_figure,
    trend_figure,
)
from ...project.suggestions import features_wait
from ...review_report.figures import note_figure
from ..workers import Job, JobRunner
from .paint import FigureView

#: grid cell -> figures stacked in it
MIN_SCALE = 0.7  # figures are never drawn smaller than this; the board scrolls instead
LAYOUT = {(0, 0): ("label_alpha",), (0, 1): ("pairwise",), (0, 2): ("confusion",),
          (1, 0): ("trend",), (1, 1): ("caption_bleu", "caption_cider"), (1, 2): ("throughput",),
          # annotator reliability panel, and the other caption consensus measures
          (2, 0): ("reliability",), (2, 1): ("check_accuracy",),
          (2, 2): ("caption_rouge_l", "caption_chrf"),
          # which cues carry the labels (grouped cross-validation of label suggestions)
          (3, 0): ("cue_accuracy", "cue_accepted"), (3, 1): ("cue_f1",), (3, 2): ("cue_labels",)}
#: the figures of the cues panel: computed by a job of their own, after the board's numbers
CUE_FIGURES = ("cue_accuracy", "cue_f1", "cue_labels", "cue_accepted")

#: panel -> its title while its numbers are on the way
WAITING = {"label_alpha": "Label agreement", "pairwise": "Pairwise Cohen kappa",
           "confusion": "Confusion matrix", "trend": "Label agreement over time",
           "caption_bleu": "Caption consensus: leave-one-out BLEU",
           "caption_cider": "Caption consensus: CIDEr-D",
           "throughput": "Throughput: clips per hour of working time",
           "reliability": "Annotator reliability", "check_accuracy": "Check clips",
           "caption_rouge_l": "Caption consensus: leave-one-out ROUGE-L",
           "caption_chrf": "Caption consensus: leave-one-out chrF"}
WAITING_NOTE = "Waiting for the numbers…"
CAPTIONS_NOTE = ("Computing: the captions changed since these numbers were kept, so they are "
                 "worked out again (the label numbers come first)…")


class FocusFigure(FigureView):
    """A figure that, when it gets keyboard focus, lists all its numbers in the details pane."""

    focused = Signal(str)

    def set_figure(self, fig) -> None:
        # a figure with no title holds a place (the cue panels before their numbers): it is
        # not drawn as an empty box and takes no Tab stop; once placed in the board, that is
        super().set_figure(fig)
        if self.parent() is not None:
            self.setVisible(bool(fig.title))

    def focusInEvent(self, event) -> None:  # noqa: N802
        super().focusInEvent(event)
        self.focused.emit("\n\n".join(self.all_tips()) or self.fig.title)
        self.update()


class AgreementBoard(QWidget):
    exportRequested = Signal()
    loaded = Signal()        # every panel but the cues holds its numbers
    partial = Signal(str)    # a part of the numbers is on screen (see BOARD_PARTS)
    cuesLoaded = Signal()    # the cues panel holds its numbers too
    ended = Signal()         # the computation of the numbers ended: loaded, failed or stopped

    def __init__(self, project, parent: QWidget | None = None, *, n_boot: int = 1000) -> None:
        super().__init__(parent)
        self.setObjectName("agreementBoard")
        self.project = project
        self.n_boot = n_boot
        self.data: dict | None = None   # the numbers once complete (None while computing)
        self.job: Job | None = None     # the computation whose results are shown, if running
        self.cues: dict | None = None
        self.cues_job: Job | None = None
        self.runner = JobRunner(self)
        lay = QVBoxLayout(self)
        lay.setContentsMargins(8, 6, 8, 6)
        top = QHBoxLayout()
        self.summary = QLabel("Computing agreement…")
        self.summary.setObjectName("boardSummary")
        self.summary.setWordWrap(True)
        top.addWidget(self.summary, 1)
        self.pair = QComboBox()
        self.pair.setAccessibleName("Annotator pair of the confusion matrix")
        self.pair.setSizeAdjustPolicy(QComboBox.SizeAdjustPolicy.AdjustToContents)
        self.pair.currentIndexChanged.connect(self._pair_changed)
        top.addWidget(QLabel("Confusion of:"))
        top.addWidget(self.pair)
        self.progress = QProgressBar()
        self.progress.setObjectName("boardProgress")
        self.progress.setRange(0, len(BOARD_PARTS))
        self.progress.setFormat("%v of %m parts")
        self.progress.setFixedWidth(140)
        self.progress.setVisible(False)
        self.stop_button = QPushButton("Stop")
        self.stop_button.setToolTip("Stop computing the board; the panels already filled stay")
        self.stop_button.clicked.connect(self.stop)
        self.stop_button.setVisible(False)
        top.addWidget(self.progress)
        top.addWidget(self.stop_button)
        self.refresh_button = QPushButton("Recompute")
        self.refresh_button.clicked.connect(self.refresh)
        export = QPushButton("Write agreement report…")
        export.setToolTip("Write the board as report.html plus CSV tables (Ctrl+Shift+R)")
        export.clicked.connect(self.exportRequested)
        top.addWidget(self.refresh_button)
        top.addWidget(export)
        lay.addLayout(top)
        self.figs: dict[str, FocusFigure] = {}
        inner = QWidget()
        grid = QGridLayout(inner)
        grid.setSpacing(10)
        for (r, c), names in LAYOUT.items():
            cell = QVBoxLayout()
            cell.setSpacing(10)
            for name in names:
                v = FocusFigure()
                v.setObjectName(f"figure_{name}")
                v.hovered.connect(self._details)
                v.focused.connect(self._details)
                self.figs[name] = v
                cell.addWidget(v, 0, Qt.AlignmentFlag.AlignLeft)
            cell.addStretch(1)
            grid.addLayout(cell, r, c)
        for v in self.figs.values():
            v.set_figure(v.fig)  # placed now: an empty one is hidden until it has a figure
        grid.setRowStretch(max(r for r, _ in LAYOUT) + 1, 1)
        grid.setColumnStretch(3, 1)
        scroll = self.scroll = QScrollArea()
        scroll.setWidget(inner)
        scroll.setWidgetResizable(True)
        scroll.viewport().installEventFilter(self)  # figures shrink to the width there is
        self._grid = grid
        lay.addWidget(scroll, 1)
        bottom = QHBoxLayout()
        self.details = QPlainTextEdit()
        self.details.setReadOnly(True)
        self.details.setObjectName("boardDetails")
        self.details.setPlaceholderText("Details: hover a mark, or Tab to a figure, to read its "
                                        "values and their recipes here.")
        self.details.setFixedHeight(92)
        bottom.addWidget(self.details, 1)
        legend = QLabel("Colours: orange below chance, pale near 0, blue agreement (−1…1); "
                        "counts from pale to dark blue.\nBands: Landis & Koch (1977), "
                        "a convention, not a test.")
        legend.setWordWrap(True)
        legend.setObjectName("wordCount")
        legend.setFixedWidth(330)
        bottom.addWidget(legend)
        lay.addLayout(bottom)

    # ---- numbers -----------------------------------------------------------------------
    @Slot()
    def refresh(self) -> Job:
        """Recompute the board's numbers in the background, part by part, cheapest first:
        each panel is drawn as soon as its part arrives. Results of a computation stopped or
        superseded meanwhile are dropped."""
        if self.job is not None:
            self.job.cancel()
        self.refresh_button.setEnabled(False)
        self.summary.setText("Computing agreement…")
        if self.data is None:  # (a recompute keeps the numbers shown until new ones arrive)
            for name, view in self.figs.items():
                if name not in CUE_FIGURES:  # (they wait for the board, see compare_cues)
                    view.set_figure(note_figure(WAITING[name], WAITING_NOTE, width=300))
            self.fit_figures()
        p, n = self.project, self.n_boot

        def compute(cancel, progress):  # worker thread
            for i, (part, data) in enumerate(board_parts(p, n_boot=n, items=False)):
                if cancel.is_set():
                    raise JobCancelled("board stopped")
                progress(i + 1, len(BOARD_PARTS))
                if part == BOARD_PARTS[-1]:
                    return data
                job.signals.partial.emit((part, dict(data)))
            raise ValueError("the board's numbers ended early")  # never: the last part returns

        job = self.job = Job("agreement board", compute)
        job.signals.partial.connect(lambda out, j=job: j is self.job and self._show_part(*out))
        job.signals.progress.connect(lambda d, _t, j=job: j is self.job and self.progress.setValue(d))
        job.signals.finished.connect(lambda data, j=job: j is self.job and self.show_data(data))
        job.signals.failed.connect(lambda msg, j=job: j is self.job and self._ended(
            f"Could not compute: {msg}"))
        self._busy(True)
        self.runner.start(job)
        return job

    @Slot()
    def stop(self) -> None:
        """Stop the computation now running; what is on screen stays."""
        if self.job is not None:
            self.job.cancel()
            self._ended("Stopped: the panels still empty were not computed. Press Recompute "
                        "for all of them.")

    def _busy(self, on: bool) -> None:
        self.progress.setValue(0)
        self.progress.setVisible(on)
        self.stop_button.setVisible(on)
        self.refresh_button.setEnabled(not on)

    def _ended(self, text: str) -> None:
        self.job = None
        self._busy(False)
        self.summary.setText(text)
        self.ended.emit()

    def _show_part(self, part: str, data: dict) -> None:
        """Draw the panels a part of the numbers fills (the rest keep waiting)."""
        if part == "meta":
            m = data["meta"]
            self.summary.setText(f"{m['clips']} clips, {m['settled']} settled · computing "
                                 "agreement…")
        elif part == "throughput":
            self.figs["throughput"].set_figure(throughput_figure(data))
        elif part == "trend" and data["trend"]:  # else it says why, once agreement is known
            self.figs["trend"].set_figure(trend_figure(data))
        elif part == "labels":  # label and segment numbers; the caption ones are on the way
            self._draw_figures(data, captions_waiting=True)
            self.figs["confusion"].set_figure(confusion_figure(data, 0))
            m = data["meta"]
            self.summary.setText(f"{m['clips']} clips, {m['settled']} settled · label numbers "
                                 "shown · computing caption consensus…")
        self.fit_figures()
        self.partial.emit(part)

    def load_now(self) -> None:
        """Compute on this thread (tests and screenshots)."""
        self.show_data(board_data(self.project, n_boot=self.n_boot, items=False))

    @Slot(object)
    def show_data(self, data: dict) -> None:
        self.data = data
        self.job = None
        self._busy(False)
        self._draw_figures(data)
        lab = data["agreement"]["labels"]
        self.pair.blockSignals(True)
        self.pair.clear()
        for p in (lab["pairs"] if lab else []):
            self.pair.addItem(f"{p['annotator_a']} vs {p['annotator_b']}")
        self.pair.blockSignals(False)
        self.pair.setEnabled(self.pair.count() > 0)
        self._pair_changed(0)
        m = data["meta"]
        if lab:
            a = lab["alpha"]
            ci = a["ci"]
            alpha = (f"Krippendorff alpha {a['value']:.3f} ({a['band']}), 95% interval "
                     f"[{ci['low']:.3f}, {ci['high']:.3f}]" if a["value"] is not None
                     and ci["low"] is not None else "alpha not measurable")
        missing = data["agreement"].get("not_measured", {})
        if not lab:
            alpha = f"labels not measured: {missing.get('labels', 'no labels yet')}"
        others = "".join(f" · {part} not measured: {why}" for part, why in missing.items()
                         if part != "labels")
        flags = data.get("flags", [])
        n_skip = sum(f["state"] == "skipped" for f in flags)
        marks = (f" · {n_skip} skipped, {len(flags) - n_skip} unsure (hover for who and why)"
                 if flags else "")
        self.summary.setText(f"{m['clips']} clips, {m['settled']} settled · {alpha}{others}{marks} · "
                             f"computed {time.strftime('%H:%M:%S')} with clipscribe {m['version']}")
        self.summary.setToolTip("\n".join(
            ([lab["alpha"]["recipe"]["text"]] if lab else [])
            + [f"clip {f['clip']} {f['path']}: {f['annotator']} {f['state']}"
               + (f" — {f['reason']}" if f["reason"] else "") for f in flags[:30]]))
        self.details.setPlainText("\n\n".join(self.figs["label_alpha"].all_tips()[:2]))
        self.loaded.emit()
        self.ended.emit()
        self.compare_cues()

    def _draw_figures(self, data: dict, captions_waiting: bool = False) -> None:
        """Every panel's figure from ``data`` but the confusion (drawn for the pair chosen) and
        the cues (a job of their own); with ``captions_waiting`` the caption panels say they
        are being computed instead."""
        figs = board_figures(data)
        for name, view in self.figs.items():
            if name == "confusion" or name in CUE_FIGURES:
                continue
            view.set_figure(note_figure(WAITING[name], CAPTIONS_NOTE, width=300)
                            if captions_waiting and name.startswith("caption_") else figs[name])

    @Slot()
    def compare_cues(self) -> None:
        """Which cues carry the labels: cross-validate the label suggestions' streams in the
        background (clip features come from the cache, or are computed there)."""
        if self.cues_job is not None:
            return
        from ...review_report.cues import TITLE, cues_data
        for name in CUE_FIGURES:
            self.figs[name].set_figure(note_figure(TITLE, "comparing the cues in the "
                                                          "background…") if name == CUE_FIGURES[0]
                                       else note_figure("", ""))
        p, n = self.project, self.n_boot
        def compare(cancel, progress):  # worker thread
            if wait := features_wait(p, labelled_only=True):
                return {"not_measured": wait}
            return cues_data(p, n_boot=n, cancel=cancel, progress=progress)
        job = self.cues_job = Job("which cues carry the labels", compare)
        job.signals.finished.connect(self.show_cues)
        job.signals.failed.connect(lambda msg: self.show_cues({"not_measured": msg}))
        job.signals.cancelled.connect(lambda: setattr(self, "cues_job", None))
        self.runner.start(job)

    @Slot(object)
    def show_cues(self, cues: dict) -> None:
        from ...review_report.cues import cues_figures
        self.cues_job, self.cues = None, cues
        for name, fig in cues_figures(cues).items():
            self.figs[name].set_figure(fig)
        self.fit_figures()
        self.cuesLoaded.emit()

    def _pair_changed(self, i: int) -> None:
        if self.data is not None:
            self.figs["confusion"].set_figure(confusion_figure(self.data, max(0, i)))
            self.fit_figures()

    def eventFilter(self, obj, event) -> bool:  # noqa: N802
        if obj is self.scroll.viewport() and event.type() == QEvent.Type.Resize:
            self.fit_figures()
        return super().eventFilter(obj, event)

    def fit_figures(self) -> None:
        """Draw the figures smaller (down to MIN_SCALE) when their columns are wider than the
        board, so no figure is cut at the right edge; below that the board scrolls."""
        cols: dict[int, int] = {}
        for (_r, c), names in LAYOUT.items():
            cols[c] = max([cols.get(c, 0)] + [self.figs[n].natural_width() for n in names])
        m = self._grid.contentsMargins()
        room = self.scroll.viewport().width() - m.left() - m.right() \
            - self._grid.spacing() * (len(cols) - 1) - 4
        scale = max(MIN_SCALE, min(1.0, room / max(1, sum(cols.values()))))
        for v in self.figs.values():
            v.set_scale(scale)

    def _details(self, text: str) -> None:
        self.details.setPlainText(text)
