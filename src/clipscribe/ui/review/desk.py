"""The review desk: disputed clips on the left; the clip with every annotator's segments stacked
on one timeline and their captions side by side in the middle; Settle on the right.

Widgets only show and emit; every decision goes through :class:`ReviewEditor` (one transaction
each, recorded with the lead's name in the edit history, undoable)."""

from __future__ import annotations

import math
import threading

from PySide6.QtCore import QItemSelectionModel, Qt, Signal, Slot
from PySide6.QtGui import QAction, QImage, QKeySequence
from PySide6.QtWidgets import (
    QAbstractItemView, QComboBox, QHBoxLayout, QHeaderView, QLabel, QScrollArea, QSplitter,
    QTableView, QVBoxLayout, QWidget,
)

from ...media import JobCancelled
from ..player import Player, TransportBar
from ..viewer import FrameView
from ..workers import Job, JobRunner
from .caption_model import CaptionGridModel
from .editor import ReviewEditor
from .gold_segments import GoldSegmentModel
from .queue_model import PAGE, ClipIdRole, DisputedClipsModel
from .settle import SettlePanel, heading
from .tracks import GOLD, TrackStack

QUEUE_BOOT = 1  # the queue's order needs no intervals; the board computes those


#: the group the review desk's commands are listed under in the shortcut sheet
DESK_GROUP = "Review desk"


def desk_action(parent: QWidget, text: str, keys, slot, *, context=None) -> QAction:
    a = QAction(text, parent)
    a.setProperty("group", DESK_GROUP)
    if keys:
        a.setShortcuts([QKeySequence(k) for k in (keys if isinstance(keys, list) else [keys])])
        a.setToolTip(f"{text}  ({a.shortcut().toString(QKeySequence.SequenceFormat.NativeText)})")
    a.setShortcutContext(context or Qt.ShortcutContext.WidgetWithChildrenShortcut)
    a.triggered.connect(lambda _=False: slot())
    parent.addAction(a)
    return a


class ReviewDesk(QWidget):
    frameReady = Signal()   # the clip under review has a frame on screen
    status = Signal(str)
    ranked = Signal(int)    # the queue is ranked (number of disputed clips) and shown
    provisional = Signal(int)  # a first order by label disagreement alone is shown
    ready = Signal()        # once: ranked, and the first clip's frame is on screen (or no clip)
    usable = Signal()       # once: a first page of the queue and a clip's frame are on screen

    def __init__(self, project, parent: QWidget | None = None, *,
                 hold_report: bool = False) -> None:
        """``hold_report``: rank by the agreement report only after :meth:`release_report`
        (the window opens on the agreement board; see :meth:`hold_report`)."""
        super().__init__(parent)
        self.setObjectName("reviewDesk")
        self.project = project
        self.lead = project.check_reviewer()
        self.labels = [l.name for l in project.labels()]
        self.colours = {l.name: l.colour for l in project.labels()}
        self.report = None
        self.cmp = None
        self.editor = ReviewEditor(project, self)
        self.player = Player(self)
        self.runner = JobRunner(self)
        self.ranking: Job | None = None  # the ranking job running now, if any
        self._ranked_note = ""
        self._ready = False
        self._usable = False
        self._picked = False  # the lead chose the open clip (a new order keeps it open)
        self._caption_scores: dict[str, list] = {}  # clip -> its captions' scores in the report
        self._report_gate = threading.Event()  # cleared while the board goes first (hold_report)
        if not hold_report:
            self._report_gate.set()
        self._build()
        self._wire()
        self.reload_queue()

    # ---- building ----------------------------------------------------------------------
    def _build(self) -> None:
        p = self.project
        self.queue_model = DisputedClipsModel(self, p)
        self.caption_model = CaptionGridModel(self.editor.settle_captions, self)
        self.segment_model = GoldSegmentModel(
            lambda segs: self.editor.settle_segments(segs) is not None, self)
        self.caption_model.writer = lambda items: self.editor.settle_captions(items) is not None

        left = QWidget()
        ll = QVBoxLayout(left)
        ll.setContentsMargins(6, 6, 6, 6)
        ll.addWidget(heading("Disputed clips"))
        self.by_label, self.by_person, self.by_group = QComboBox(), QComboBox(), QComboBox()
        for box, everyone, items, name in (
                (self.by_label, "any label", self.labels, "Filter by label"),
                (self.by_person, "any annotator",
                 [a.name for a in p.annotators() if a.role != "lead"], "Filter by annotator"),
                (self.by_group, "any group", p.groups(), "Filter by group")):
            box.addItem(everyone, None)
            for it in items:
                box.addItem(it, it)
            box.setAccessibleName(name)
            ll.addWidget(box)
        self.rank_by = QComboBox()
        self.rank_by.setObjectName("rankBy")
        self.rank_by.addItem("most disputed first", "disputed")
        self.rank_by.addItem("least certain inferred label first", "least-certain")
        self.rank_by.setAccessibleName("Order of the disputed clips")
        ll.addWidget(self.rank_by)
        self.by_flag = QComboBox()
        self.by_flag.setObjectName("flagFilter")
        self.by_flag.addItem("all clips", False)
        self.by_flag.addItem("skipped/unsure", True)
        self.by_flag.setAccessibleName("Filter: clips someone skipped or flagged unsure")
        ll.addWidget(self.by_flag)
        self.queue_view = QTableView()
        self.queue_view.setObjectName("disputedClips")
        self.queue_view.setModel(self.queue_model)
        self.queue_view.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        self.queue_view.setSelectionMode(QAbstractItemView.SelectionMode.SingleSelection)
        self.queue_view.verticalHeader().setVisible(False)
        self.queue_view.setWordWrap(False)
        hh = self.queue_view.horizontalHeader()
        # columns fitted once per new order (see _ranked), not on every change: fitting to
        # the contents measures every row given to the view
        hh.setSectionResizeMode(QHeaderView.ResizeMode.Interactive)
        hh.setStretchLastSection(True)
        ll.addWidget(self.queue_view, 1)
        self.queue_note = QLabel()
        self.queue_note.setWordWrap(True)
        self.queue_note.setObjectName("wordCount")
        ll.addWidget(self.queue_note)

        centre = QWidget()
        cl = QVBoxLayout(centre)
        cl.setContentsMargins(6, 6, 6, 6)
        cl.setSpacing(4)
        self.title = QLabel("No clip open")
        self.title.setObjectName("clipTitle")
        self.title.setWordWrap(True)
        cl.addWidget(self.title)
        self.viewer = FrameView()
        self.viewer.setMinimumSize(320, 180)
        cl.addWidget(self.viewer, 3)
        pl = self.player
        self.acts = {
            "back_second": desk_action(self, "Back one second", "Shift+Left", lambda: pl.step_seconds(-1)),
            "back_frame": desk_action(self, "Back one frame", "Left", lambda: pl.step(-1)),
            "play": desk_action(self, "Play / pause", "Space", pl.toggle),
            "fwd_frame": desk_action(self, "Forward one frame", "Right", lambda: pl.step(1)),
            "fwd_second": desk_action(self, "Forward one second", "Shift+Right", lambda: pl.step_seconds(1)),
        }
        for name, short in (("back_second", "−1 s"), ("back_frame", "−1 frame"), ("play", "Play"),
                            ("fwd_frame", "+1 frame"), ("fwd_second", "+1 s")):
            self.acts[name].setIconText(short)
            self.acts[name].setShortcutContext(Qt.ShortcutContext.WidgetShortcut)
            self.viewer.addAction(self.acts[name])
        self.transport = TransportBar(pl, list(self.acts.values()))
        cl.addWidget(self.transport)
        self.tracks = TrackStack()
        self.tracks.colours = self.colours
        cl.addWidget(self.tracks)
        hint = heading("Captions side by side — tick to accept into gold, edit to accept a "
                       "changed text (A toggles)")
        hint.setWordWrap(True)  # wraps on a narrow screen instead of widening the window
        cl.addWidget(hint)
        self.caption_view = QTableView()
        self.caption_view.setObjectName("captionGrid")
        self.caption_view.setModel(self.caption_model)
        self.caption_view.setWordWrap(True)
        self.caption_view.horizontalHeader().setSectionResizeMode(QHeaderView.ResizeMode.Stretch)
        self.caption_view.verticalHeader().setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        self.caption_view.setEditTriggers(QAbstractItemView.EditTrigger.DoubleClicked
                                          | QAbstractItemView.EditTrigger.EditKeyPressed)
        toggle = desk_action(self.caption_view, "Accept / reject caption", "A",
                             lambda: self.caption_model.toggle(self.caption_view.currentIndex()),
                             context=Qt.ShortcutContext.WidgetShortcut)
        toggle.setObjectName("toggleCaption")
        desk_action(self.caption_view, "Accept all this annotator's captions", "Shift+A",
                    lambda: self.caption_model.accept_column(self.caption_view.currentIndex().column()),
                    context=Qt.ShortcutContext.WidgetShortcut).setObjectName("acceptColumn")
        cl.addWidget(self.caption_view, 2)

        self.settle = SettlePanel(self.labels, self.segment_model)
        right = QScrollArea()
        right.setWidgetResizable(True)
        right.setWidget(self.settle)
        right.setMinimumWidth(320)

        split = QSplitter(Qt.Orientation.Horizontal)
        split.addWidget(left)
        split.addWidget(centre)
        split.addWidget(right)
        split.setStretchFactor(0, 0)
        split.setStretchFactor(1, 1)
        split.setStretchFactor(2, 0)
        split.setSizes([420, 680, 340])
        lay = QHBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(split)

        self.undo_action = self.editor.undo_stack.createUndoAction(self, "Undo review decision")
        self.redo_action = self.editor.undo_stack.createRedoAction(self, "Redo review decision")
        for a, key in ((self.undo_action, QKeySequence.StandardKey.Undo),
                       (self.redo_action, QKeySequence.StandardKey.Redo)):
            a.setShortcuts(QKeySequence.keyBindings(key))
            a.setShortcutContext(Qt.ShortcutContext.WidgetWithChildrenShortcut)
            self.addAction(a)
        self.acts.update({
            "next": desk_action(self, "Next disputed clip", "Alt+Down", lambda: self.step(1)),
            "prev": desk_action(self, "Previous disputed clip", "Alt+Up", lambda: self.step(-1)),
            "queue": desk_action(self, "Go to disputed clips", "Ctrl+L", self.queue_view.setFocus),
            "captions": desk_action(self, "Go to captions", "Ctrl+E", self.caption_view.setFocus),
            "viewer": desk_action(self, "Go to viewer", "Ctrl+0", self.viewer.setFocus),
            "copy_track": desk_action(self, "Copy the chosen annotator's labelled segments "
                                      "to gold",
                                      "Ctrl+Shift+G",
                                      lambda: self.copy_track(self.settle.track_of.currentText())),
        })

    def key_actions(self) -> list[QAction]:
        """Every command of the desk that has a key (for the shortcut sheet)."""
        for a in (self.undo_action, self.redo_action):
            a.setProperty("group", DESK_GROUP)
        return [*self.acts.values(), *self.caption_view.actions(), self.undo_action,
                self.redo_action]

    def _wire(self) -> None:
        pl = self.player
        pl.frameShown.connect(self._frame)
        pl.playheadMoved.connect(self.tracks.set_playhead)
        pl.failed.connect(self.status)
        self.tracks.seekRequested.connect(pl.seek)
        self.tracks.goldEdited.connect(self.drag_gold)
        for box in (self.by_label, self.by_person, self.by_group, self.by_flag, self.rank_by):
            box.currentIndexChanged.connect(lambda _i: self.reload_queue(keep=True))
        self.queue_view.selectionModel().currentRowChanged.connect(
            lambda cur, _prev: cur.isValid() and self.open_clip(cur.data(ClipIdRole), picked=True))
        s = self.settle
        s.labelChosen.connect(self.editor.settle_label)
        s.copyTrack.connect(self.copy_track)
        s.addSegment.connect(self.add_segment)
        s.removeSegment.connect(self.segment_model.remove)
        s.commentSent.connect(self._comment)
        s.checkClip.connect(self.set_check_clip)
        self.editor.changed.connect(self.refresh)
        self.editor.notSaved.connect(lambda why: self.status.emit(f"Not saved: {why}"))
        self.editor.saved.connect(lambda t: self.status.emit(f"Saved {t}"))

    # ---- the queue ----------------------------------------------------------------------
    def reload_queue(self, *, keep: bool = False, quick: bool = True) -> Job:
        """Re-rank the clips (on opening, after gold changes, on a filter change) on the worker
        pool, in two steps: a provisional order by label disagreement alone (a fraction of a
        second on 100k clips) shows its first page at once (unless ``quick`` is False: after
        a decision the order shown stays until the new one is ready); the agreement report's
        order replaces it when the report is ready. A newer request supersedes one still
        running; its results are dropped."""
        p = self.project
        if self.ranking is not None:
            self.ranking.cancel()
        flt = dict(label=self.by_label.currentData(), annotator=self.by_person.currentData(),
                   group=self.by_group.currentData(), flagged=bool(self.by_flag.currentData()),
                   rank_by=self.rank_by.currentData())

        gate = self._report_gate

        def rank(cancel, progress):
            if quick:
                order = p.review_order(**flt)
                first = p.review_queue(order=order, limit=PAGE)
                if cancel.is_set():
                    raise JobCancelled("ranking superseded")
                job.signals.partial.emit((None, order, first, {}))
                progress(1, 3)
            while not gate.wait(0.05):  # the board goes first (see hold_report)
                if cancel.is_set():
                    raise JobCancelled("ranking superseded")
            report = p.agreement_report(n_boot=QUEUE_BOOT)
            if cancel.is_set():
                raise JobCancelled("ranking superseded")
            progress(2, 3)
            order = p.review_order(report=report, **flt)
            return report, order, p.review_queue(report=report, order=order, limit=PAGE), \
                _captions_by_clip(report)

        job = self.ranking = Job("ranking disputed clips", rank)
        job.signals.partial.connect(lambda out, j=job: self._ranked(j, out, keep, final=False))
        job.signals.finished.connect(lambda out, j=job: self._ranked(j, out, keep, final=True))
        job.signals.failed.connect(lambda msg, j=job: self._rank_failed(j, msg))
        if self.cmp is None:  # nothing to settle until a clip is open
            self.title.setText("Ranking disputed clips…")
            self.viewer.clear("Ranking disputed clips…")
            self.settle.setEnabled(False)
            self.caption_view.setEnabled(False)
        self.queue_note.setText(f"{self._ranked_note} Re-ranking…".lstrip() if self._ranked_note
                                else "Ranking disputed clips…")
        return self.runner.start(job)

    def hold_report(self) -> None:
        """Rank by the agreement report only after :meth:`release_report`: the window opened on
        the agreement board, whose numbers were asked for first, and two agreement reports
        computed at once on a big project each take twice as long. The provisional order
        (label disagreement alone) is still shown meanwhile."""
        self._report_gate.clear()

    @Slot()
    def release_report(self) -> None:
        """Let the ranking by the agreement report go on (see :meth:`hold_report`)."""
        self._report_gate.set()

    def _ranked(self, job: Job, out, keep: bool, *, final: bool) -> None:
        if job is not self.ranking or job.cancel_event.is_set():
            return  # superseded by a newer request
        report, order, first, captions = out
        if final:
            self.ranking = None
            self.report, self._caption_scores = report, captions
        current = self.cmp.clip.id if self.cmp else None
        self.queue_model.set_order(order, first, report)
        self.queue_view.resizeColumnsToContents()
        n = len(order)
        settled = sum(1 for r in first if r.settled)
        if not final:
            how = ("Provisional order by label disagreement alone; segment F1, caption BLEU "
                   "and the inferred labels follow when the agreement report is ready…")
        elif self.rank_by.currentData() == "disputed":
            how = "Ranked by label disagreement, then segment F1, then caption BLEU (worst first)."
        else:
            how = "Ranked by the inferred label's posterior probability (least certain first)."
        missing = self.report.not_measured if final and self.report is not None else {}
        self._ranked_note = (f"{n} clip(s)"
                             + (f", {settled} settled" if n <= len(first) else
                                f", {settled} settled among the first {len(first)}")
                             + f". {how}" + "".join(f" {part.capitalize()} not measured: {why}."
                                                    for part, why in missing.items()))
        self.queue_note.setText(self._ranked_note)
        stay = keep or self._picked  # a clip the lead chose stays open under a new order
        in_order = current is not None and self.queue_model.row_of(current) is not None
        target = current if stay and in_order else (order.clips[0] if n else None)
        if target is not None and target == current:
            self._select_row(target)  # the clip stays open where the lead is
            if final:
                self.refresh()  # its scores from the report
                if self.viewer.frame_number is not None:
                    self._set_ready()
        elif target is not None:
            self.open_clip(target)
        else:
            self.title.setText("No disputed clips")
            self.viewer.clear("No disputed clips")
        (self.ranked if final else self.provisional).emit(n)
        if target is None:
            self._set_usable()
            if final:
                self._set_ready()

    def _rank_failed(self, job: Job, msg: str) -> None:
        if job is self.ranking:
            self.ranking = None
            self.queue_note.setText(f"Could not rank the disputed clips: {msg}")
            self.status.emit(f"Could not rank the disputed clips: {msg}")
            self._set_usable()
            self._set_ready()

    def _set_ready(self) -> None:
        if not self._ready:
            self._ready = True
            self.ready.emit()

    def _set_usable(self) -> None:
        if not self._usable:
            self._usable = True
            self.usable.emit()

    def step(self, delta: int) -> None:
        m = self.queue_model
        if self.cmp is None or not m.total:
            return
        i = m.row_of(self.cmp.clip.id)
        j = 0 if i is None else min(max(0, i + delta), m.total - 1)
        self.open_clip(m.clip_at(j), picked=True)

    # ---- one clip ----------------------------------------------------------------------
    @Slot(int)
    def open_clip(self, clip_id: int, *, picked: bool = False) -> None:
        """Open ``clip_id``; ``picked``: the lead chose it (a new order keeps it open)."""
        if self.cmp is not None and self.cmp.clip.id == clip_id:
            return
        self._picked = picked
        self.editor.clip = clip_id
        self.editor.undo_stack.clear()  # undo works within one clip at a time
        self.refresh()
        info = self.cmp.clip
        self.viewer.clear("Loading…")
        starts = [g.start for segs in self.cmp.segments.values() for g in segs]
        # open on the first marked action: that is where the annotators part ways
        self.player.open(self.project.media_path(info.id), info.frame_count, info.fps,
                         min(starts, default=0))
        self._select_row(clip_id)

    def _select_row(self, clip_id: int) -> None:
        row = self.queue_model.row_of(clip_id)
        if row is not None:
            self.queue_view.selectionModel().setCurrentIndex(
                self.queue_model.index(row, 0),
                QItemSelectionModel.SelectionFlag.ClearAndSelect
                | QItemSelectionModel.SelectionFlag.Rows)

    @Slot()
    def drag_gold(self, segments: list) -> None:
        """A gold edge dragged on the tracks: written like a table edit (one decision, undoable);
        refused, the tracks go back to what the project holds."""
        if not self.segment_model.replace(segments):
            self.refresh()

    def refresh(self) -> None:
        """Re-read the clip under review (after every decision, undo and redo)."""
        if self.editor.clip is None:
            return
        cmp = self.cmp = self.project.clip_comparison(self.editor.clip, report=self.report)
        self.settle.setEnabled(True)
        self.caption_view.setEnabled(True)
        c = cmp.clip
        sc = cmp.scores
        missing = ({p: "not measured" for p in self.report.not_measured}
                   if self.report is not None else {})
        if self.report is None:  # provisional: the queue's label disagreement, the rest to come
            at = self.queue_model.row_of(c.id)
            row = self.queue_model.get(at) if at is not None else None
            sc = {"label_disagreement": row.label_disagreement} if row is not None else {}
            missing = {"segments": "computing…", "captions": "computing…"}
        nums = "  ·  ".join(
            f"{k}: {missing[part] if part in missing else _fmt(sc.get(key), f)}"
            for k, key, f, part in (
                ("label disagreement", "label_disagreement", "{:.2f}", "labels"),
                ("segment F1", "segment_f1", "{:.2f}", "segments"),
                ("caption BLEU", "caption_bleu", "{:.1f}", "captions")))
        skips = "".join(f"  ·  skipped by {a}: {why}" for a, why in cmp.skipped.items()) + "".join(
            f"  ·  unsure: {a}" + (f" ({note})" if note else "") for a, note in cmp.unsure.items())
        self.title.setText(f"Clip {c.id}: {c.path} ({c.group or 'no group'}), {c.frame_count} "
                           f"frames at {c.fps:g} fps — {nums}{skips}")
        tracks = [(a, [(g.label, g.start, g.end) for g in cmp.segments.get(a, [])])
                  for a in cmp.annotators]
        self.tracks.set_tracks(tracks + [(GOLD, cmp.gold_segments)], c.frame_count)
        bleu, flags = {}, {}
        if self._caption_scores:
            ids = {(x.annotator, x.text): x.id for v in cmp.captions.values() for x in v}
            for s in self._caption_scores.get(str(c.id), ()):
                if (s.annotator, s.text) in ids:
                    cid = ids[(s.annotator, s.text)]
                    bleu[cid] = s.bleu
                    if s.flagged:
                        flags[cid] = s.reason
        self.caption_model.load(cmp, bleu=bleu, flags=flags)
        self.segment_model.load(cmp.gold_segments, self.labels)
        self.settle.show_clip(cmp.labels, cmp.gold_label, cmp.annotators, cmp.comments,
                              cmp.skipped, cmp.unsure, cmp.posterior)
        self.settle.show_check(self.project.check_clips().get(c.id), cmp.gold_label)
        row = self.queue_model.row_of(c.id)
        shown = self.queue_model.get(row) if row is not None else None
        if shown is not None and shown.gold_label != cmp.gold_label and self.ranking is None:
            self.reload_queue(keep=True, quick=False)

    def set_check_clip(self, on: bool) -> None:
        """Make the clip under review a check clip with its gold label as the answer, or an
        ordinary clip again."""
        if self.cmp is None:
            return
        clip = self.cmp.clip.id
        try:
            if on:
                answer = self.project.mark_check_clip(clip)
                self.status.emit(f"Clip {clip} is a check clip, known answer “{answer}”")
            else:
                self.project.unmark_check_clip(clip)
                self.status.emit(f"Clip {clip} is no longer a check clip")
        except Exception as exc:  # noqa: BLE001 - a refusal is shown, never raised in a slot
            self.status.emit(f"Not saved: {exc}")
        self.refresh()

    def copy_track(self, annotator: str) -> None:
        if self.cmp is None:
            return
        theirs = self.cmp.segments.get(annotator, [])
        segs = [(g.label, g.start, g.end) for g in theirs if g.label is not None]
        left_out = len(theirs) - len(segs)
        if left_out and not segs:  # copying nothing would clear the gold segments
            self.status.emit(f"Nothing copied: {annotator}'s segments are all unlabelled")
            return
        done = self.editor.settle_segments(segs, f"Copy {annotator}'s segments to gold")
        if done is not None and left_out:
            self.status.emit(f"Copied {len(segs)} of {annotator}'s segments to gold; "
                             f"{left_out} unlabelled left out")

    def add_segment(self) -> None:
        if self.cmp is None:
            return
        c = self.cmp.clip
        start = min(self.player.frame, c.frame_count - 1)
        end = min(c.frame_count, start + max(1, round(c.fps)))
        label = self.cmp.gold_label or self.settle.any_label.currentText()
        if not label:  # never a label picked for the lead
            self.status.emit("Settle the clip label, or choose one in the list, before adding "
                             "a gold segment")
            return
        self.segment_model.add((label, start, end))

    def _comment(self, text: str, to) -> None:
        if self.editor.comment(text, to) is not None:
            self.settle.comment_sent()

    @Slot(int, QImage)
    def _frame(self, frame: int, image: QImage) -> None:
        self.viewer.show_frame(frame, image)
        self.frameReady.emit()
        self._set_usable()
        if self.report is not None:
            self._set_ready()

    def close_media(self) -> None:
        if self.ranking is not None:
            self.ranking.cancel()
        self.player.close()
        self.runner.wait()


def _captions_by_clip(report) -> dict[str, list]:
    """{clip (as text): its captions' leave-one-out scores} of a report, made once per report
    (on the worker), so opening a clip never walks every caption of the project."""
    out: dict[str, list] = {}
    if report is not None and report.captions is not None:
        for s in report.captions.bleu.captions:
            out.setdefault(str(s.clip), []).append(s)
    return out


def _fmt(v, f: str) -> str:
    return "–" if v is None or (isinstance(v, float) and math.isnan(v)) else f.format(v)
