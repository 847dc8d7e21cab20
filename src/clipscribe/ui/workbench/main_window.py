"""The workbench window: wires the queue, viewer, scrub bar, timeline, clip panel and
captions to the project. Widgets only show and emit; edits go through :class:`ClipEditor`.
The window has two views: the work view and the review view (the lead's review page)."""

from __future__ import annotations

from PySide6.QtCore import QSettings, Qt, QTimer, Signal, Slot
from PySide6.QtGui import QCloseEvent, QGuiApplication, QImage, QKeySequence
from PySide6.QtWidgets import (
    QDialog, QDockWidget, QInputDialog, QLabel, QMainWindow, QMessageBox, QSizePolicy, QStackedWidget,
    QVBoxLayout, QWidget,
)

from ...errors import GuidelineNotMet
from ...media.jobs import shared_cache_dir
from ..boot import remember_project
from ..dialogs.help import CautionsNote, ShortcutSheet
from ..editor import ClipEditor
from ..focus import FocusRing, fit_window
from ..player import Player, TransportBar
from ..review.page import ReviewPage, ReviewView
from ..viewer import FrameView
from .actions import build_actions
from .captions import CaptionsPanel
from .clip_panel import ClipPanel
from .flow_view import MODE_WORDS, FlowLook
from .suggestions import SuggestionFeed
from .jobs_view import ClipJobs
from .menus import build_menus
from .others_captions import OthersCaptions
from .queue import QueuePanel
from .queue_model import ClipQueueModel
from .scrub_bar import ScrubBar
from .segment_model import SegmentModel
from .segments_ops import SegmentOps
from .submit_check import ask_override
from .timeline import Timeline
from .work_pause import SHARED_ACTIONS, WorkViewPause

RESUME_MS = 400
#: the work view's dock layout (a key of its own: the layout once saved under "window/state"
#: may be a review view's, with every dock hidden, and is not read)
WORK_STATE_KEY = "window/work/state"


class MainWindow(SegmentOps, QMainWindow):
    ready = Signal()  # the first clip's frame, thumbnails and motion curve are on screen

    def __init__(self, project, *, settings: QSettings | None = None, view: str = "work") -> None:
        """``view``: "work", "review" (the review desk) or "board" (the agreement board, the
        review view's second tab)."""
        super().__init__()
        self.project = project
        self._shown_state: tuple[int, str] | None = None  # (clip, state) last shown, for reopens
        self._shown_label: str | None = None
        self._least_certain: list[int] = []
        self.settings = settings if settings is not None else QSettings()
        self.setWindowTitle(f"clipscribe — {project.settings.name} — {project.user}")
        self.setObjectName("workbench")
        self.label_infos = project.labels()
        self.colours = {l.name: l.colour for l in self.label_infos}
        self.editor = ClipEditor(project, self)
        self.player = Player(self)
        self.clip = None
        self._ready_parts: set[str] = set()
        self._build_widgets()
        self.actions_ = build_actions(self)
        self.work_pause = WorkViewPause(self.actions_, lambda: self.findChildren(QDockWidget),
                                        self.editor.undo_stack)
        self._build_panels()
        build_menus(self)
        self._wire()
        self._resume_timer = QTimer(self, singleShot=True, interval=RESUME_MS)
        self._resume_timer.timeout.connect(self._write_resume)
        self._restore_layout()
        self._open_first()
        self._announce_comments()
        self.suggestions.train()  # in the background; the clip on screen gets its bars after
        self.show_view(view)
        self._write_resume()  # remembered as the last project even before any clip is open

    # ---- building ----------------------------------------------------------------------
    def _build_widgets(self) -> None:
        p = self.project
        self.queue_model = ClipQueueModel(p, self)
        self.queue = QueuePanel(self.queue_model, labels=[l.name for l in self.label_infos],
                                groups=p.groups(), people=[a.name for a in p.annotators()])
        self.viewer = FrameView()
        self.scrub = ScrubBar()
        self.segment_model = SegmentModel(self)
        self.timeline = Timeline(self.segment_model)
        self.timeline.colours = self.colours
        self.clip_panel = ClipPanel()
        self.captions = CaptionsPanel(self.editor, p.settings.caption_guideline)
        self.others_captions = OthersCaptions()
        self.jobs = ClipJobs(self)
        self.suggestions = SuggestionFeed(self.project, self)
        self.flow = FlowLook(self)
        self.save_state = QLabel("Nothing changed yet")
        self.save_state.setObjectName("saveState")
        self.statusBar().addPermanentWidget(self.save_state)

    def _build_panels(self) -> None:
        a = self.actions_
        transport = TransportBar(self.player, [a["back_second"], a["back_frame"], a["play"],
                                               a["fwd_frame"], a["fwd_second"], a["loop"]])
        self.transport = transport
        work = QWidget()
        lay = QVBoxLayout(work)
        lay.setContentsMargins(6, 6, 6, 6)
        lay.setSpacing(4)
        lay.addWidget(self.viewer, 1)
        lay.addWidget(transport)
        lay.addWidget(self.scrub)
        lay.addWidget(self.timeline)
        self.review_page = ReviewView(self.project)
        self.stack = QStackedWidget()
        self.stack.addWidget(work)
        self.stack.addWidget(self.review_page)
        self.review_page.setSizePolicy(QSizePolicy.Policy.Ignored, QSizePolicy.Policy.Ignored)
        self.setCentralWidget(self.stack)
        self.clip_panel.set_label_actions(
            [a[f"label:{l.name}"] for l in self.label_infos], self.colours)
        self.clip_panel.set_state_actions([a["submit"], a["skip"], a["unsure"]])
        side = FocusRing()
        side.setObjectName("clipSide")
        sl = QVBoxLayout(side)
        sl.setContentsMargins(6, 0, 6, 6)
        sl.addWidget(self.clip_panel)
        heading = QLabel("Captions")
        heading.setObjectName("heading")
        sl.addWidget(heading)
        sl.addWidget(self.captions, 1)
        sl.addWidget(self.others_captions, 1)
        self._dock("Clip queue", "queueDock", self.queue, Qt.DockWidgetArea.LeftDockWidgetArea)
        clip_dock = self._dock("Clip", "clipDock", side, Qt.DockWidgetArea.RightDockWidgetArea)
        self.resizeDocks([self.findChild(QDockWidget, "queueDock"), clip_dock], [330, 420],
                         Qt.Orientation.Horizontal)

    def _dock(self, title: str, name: str, widget: QWidget, area) -> QDockWidget:
        d = QDockWidget(title, self)
        d.setObjectName(name)
        d.setWidget(widget)
        d.setFeatures(QDockWidget.DockWidgetFeature.DockWidgetMovable
                      | QDockWidget.DockWidgetFeature.DockWidgetFloatable
                      | QDockWidget.DockWidgetFeature.DockWidgetClosable)  # View menu brings it back
        self.addDockWidget(area, d)
        return d

    def _wire(self) -> None:
        pl = self.player
        pl.frameShown.connect(self._frame_shown)
        pl.playheadMoved.connect(self.scrub.set_playhead)
        pl.playheadMoved.connect(self.timeline.set_playhead)
        pl.playheadMoved.connect(self._moved)
        pl.failed.connect(lambda msg: self.statusBar().showMessage(msg, 8000))
        pl.stateChanged.connect(self._player_state)
        self.scrub.seekRequested.connect(pl.seek)
        self.timeline.seekRequested.connect(pl.seek)
        self.timeline.segmentSelected.connect(self._segment_selected)
        self.timeline.edgeMoved.connect(self.editor.move_segment)
        self.queue.clipChosen.connect(self.open_clip)
        self.stack.currentChanged.connect(self._view_switched)
        self.review_page.built.connect(self._review_built)
        self.clip_panel.skipConfirmed.connect(lambda r: self.editor.set_state("skipped", r))
        self.clip_panel.commentsRead.connect(self.mark_comments_read)
        self.editor.changed.connect(self.refresh)
        self.suggestions.shown.connect(self._show_suggestion)
        self.suggestions.ordered.connect(self._order_ready)
        self.flow.ready.connect(self._flow_ready)
        self.flow.failed.connect(lambda msg: self.statusBar().showMessage(msg, 6000))
        self.queue.orderChosen.connect(lambda _o: self._order_ready(self._least_certain))
        self.suggestions.trained.connect(lambda text: self.statusBar().showMessage(text, 6000))
        self.editor.saving.connect(lambda: self._show_saved("Saving…", None))
        self.editor.saved.connect(lambda t: self._show_saved(f"Saved {t}", True))
        self.editor.notSaved.connect(lambda why: self._show_saved(f"Not saved: {why}", False))
        self.jobs.thumbnailsReady.connect(lambda imgs: (self.scrub.set_thumbnails(imgs),
                                                        self._part_ready("thumbs")))
        self.jobs.curveReady.connect(lambda v: (self.scrub.set_curve(v), self._part_ready("motion")))
        self.jobs.progressText.connect(self.scrub.set_status)
        self.jobs.failed.connect(lambda msg: (self.statusBar().showMessage(msg, 8000),
                                              self._part_ready("thumbs"), self._part_ready("motion")))

    # ---- clips -------------------------------------------------------------------------
    def _open_first(self) -> None:
        key = f"resume/{self.project.folder.resolve()}"
        clip = self.settings.value(f"{key}/clip", None)
        frame = int(self.settings.value(f"{key}/frame", 0) or 0)
        try:
            clip = int(clip) if clip is not None else None
            if clip is not None:
                self.project.clip(clip)
        except (ValueError, TypeError, LookupError):
            clip = None
        if clip is None:
            clip = self.project.next_unfinished_clip() or (
                self.queue_model.row(0).clip.id if self.queue_model.rowCount() else None)
            frame = 0
        if clip is not None:
            self.open_clip(clip, frame)
        else:
            self.viewer.set_note(self.empty_note())

    def _announce_comments(self) -> None:
        """Tell the person on opening which clips hold comments from the lead they have not
        read yet (shown in the clip panel of each)."""
        unread = self.project.unread_comments()
        if unread:
            n = sum(unread.values())
            clips = ", ".join(str(c) for c in sorted(unread)[:8]) + (" …" if len(unread) > 8 else "")
            self.statusBar().showMessage(
                f"{n} new comment{'s' if n != 1 else ''} from the lead on clip"
                f"{'s' if len(unread) != 1 else ''} {clips}", 20000)

    def empty_note(self) -> str:
        if self.project.role(self.project.user) != "lead":
            return "This project has no clips yet.\nYour lead adds them."
        return ("This project has no clips yet.\nFile > Set up project… (Ctrl+Shift+P) "
                "sets its labels and adds videos.")

    @Slot(int)
    def open_clip(self, clip_id: int, frame: int = 0) -> None:
        if self.clip is not None and self.clip.id == clip_id:
            return
        if not self.settle_conflicts():
            self.queue.select_clip(self.clip.id)
            return
        self.captions.flush()
        self.jobs.cancel()
        if self.timeline.pending_start is not None:  # the mark belongs to the clip left behind
            self.statusBar().clearMessage()
        self._leave_fields()
        self.clip = info = self.project.clip(clip_id)
        self.editor.clip = info.id
        self.editor.restore_undo(info.id)  # undo works within one clip, back to its first edit
        path = self.project.media_path(info.id)
        self.viewer.clear("Loading…")
        self.scrub.reset(info.frame_count)
        self.timeline.reset(info.frame_count)
        self.player.open(path, info.frame_count, info.fps, frame)
        self.flow.open(path)
        self.jobs.start(path, shared_cache_dir(self.project.media_root))
        self.queue.select_clip(info.id)
        self.refresh()

    @Slot()
    def refresh(self) -> None:
        """Re-read the current person's work on the clip on screen and, with blind mode off,
        the others' (read only)."""
        if self.clip is None:
            return
        p, me, cid = self.project, self.project.user, self.clip.id
        segments = p.segments(clip=cid, annotator=me)
        self.segment_model.set_segments(segments)
        if self.timeline.selected is not None and self.segment_model.by_id(self.timeline.selected) is None:
            self.timeline.set_selected(None)
        self.captions.load(p.caption_rows(clip=cid, annotator=me), segments,
                           versions=p.caption_versions(cid, me))
        state, reason = p.clip_state(cid, me)
        if self._shown_state == (cid, "submitted") and state == "open":
            self.statusBar().showMessage(f"Clip {cid} reopened: you changed it after submitting; "
                                         "submit it again when done (Ctrl+Return)", 8000)
        self._shown_state = (cid, state)
        c = self.clip
        mine = p.my_clip_label(cid, me)
        self.clip_panel.show_clip(f"Clip {c.id}: {c.path}\n{c.frame_count} frames, {c.fps:g} fps, "
                                  f"{c.width}×{c.height}", mine, state, reason)
        if self.suggestions.clip != cid:
            self.suggestions.show_clip(cid, mine is not None)
        elif mine is not None and mine != self._shown_label:
            self.suggestions.label_set()
        self._shown_label = mine
        self.clip_panel.show_comments(p.my_comments(cid, me))
        others = p.others_work(cid, me)
        self.clip_panel.show_others(others.labels)
        self.others_captions.set_captions(others.captions)
        self.timeline.set_others(others.segments)
        self.queue_model.refresh_clip(cid)

    @Slot()
    def toggle_flow(self) -> None:
        """Picture -> optical flow in its place -> flow over the picture -> picture."""
        mode = self.flow.next_mode()
        self.actions_["flow"].setChecked(mode != "off")
        if mode == "off":
            self.viewer.set_overlay(None)
        elif self.viewer.frame_number is not None:
            self.flow.want(self.viewer.frame_number)
        self.statusBar().showMessage(f"Viewer shows the {MODE_WORDS[mode]}", 4000)

    def _flow_ready(self, frame: int, image, scale: float) -> None:
        if self.flow.mode != "off" and frame == self.viewer.frame_number:
            self.viewer.set_overlay((self.flow.mode, image, frame, scale, self.flow.legend))

    def _order_ready(self, order: list) -> None:
        """Keep the latest "least certain first" order; apply it when that order is chosen."""
        self._least_certain = order
        wanted = self.queue.order.currentData() == "least-certain"
        if not wanted:
            if self.queue_model.order is not None:
                self.queue_model.set_order(None)
        elif order or self.queue_model.order is not None:
            self.queue_model.set_order(order)
        if self.clip is not None:
            self.queue.select_clip(self.clip.id)
        if wanted and not order:
            self.statusBar().showMessage("Least certain first needs label suggestions: "
                                         + (self.project.suggestion_reason() or "learning…"), 6000)

    def _show_suggestion(self, clip: int, ranked: list, note: str) -> None:
        if self.clip is not None and clip == self.clip.id:
            key = self.actions_["accept_suggestion"].shortcut().toString(
                QKeySequence.SequenceFormat.NativeText)
            self.clip_panel.show_suggestion(ranked, note, key)

    @Slot()
    def accept_suggestion(self) -> None:
        """Set the suggested label (marked as accepted in the edit history); never automatic."""
        best = self.suggestions.best()
        if best is None or self.clip is None:
            self.statusBar().showMessage("No suggestion to accept on this clip", 5000)
            return
        self.editor.apply(f"Accept suggestion “{best}”", lambda: self.project.accept_suggestion(
            self.clip.id, self.project.user, expected=best))

    @Slot()
    def mark_comments_read(self) -> None:
        """The person acknowledged the lead's comments on the clip on screen."""
        if self.clip is not None:
            self.project.mark_comments_read(self.clip.id)
            self.clip_panel.show_comments(self.project.my_comments(self.clip.id))

    def step_clip(self, step: int) -> None:
        nxt = self.queue.neighbour(step)
        if nxt is not None:
            self.open_clip(nxt)

    @Slot()
    def go_to_clip(self) -> None:
        """Ask for a clip number or a part of a file name and open the first clip it finds."""
        text, ok = QInputDialog.getText(self, "Go to clip", "Clip number, or part of its file name:")
        if ok and text.strip():
            self.open_found(text)

    def open_found(self, text: str) -> None:
        found = self.project.find_clips(text, limit=2)
        if not found:
            self.statusBar().showMessage(f"No clip numbered or named like “{text.strip()}”", 6000)
            return
        self.open_clip(found[0].id)
        self.focus_viewer()
        if len(found) > 1:
            self.statusBar().showMessage(f"Opened clip {found[0].id}; more clips match "
                                         f"“{text.strip()}”", 6000)

    @Slot()
    def next_unfinished(self) -> None:
        nxt = self.project.next_unfinished_clip(after=self.clip.id if self.clip else None)
        if nxt is None:
            self.statusBar().showMessage("Every clip is submitted or skipped — well done", 6000)
        else:
            self.open_clip(nxt)

    @Slot()
    def submit_clip(self) -> None:
        self.captions.flush()
        done = self.editor.set_state("submitted")
        missed = self.editor.last_refusal
        if done is None and isinstance(missed, GuidelineNotMet):
            reason = self.ask_override(missed.missing, blocking=missed.blocking)
            done = self.editor.set_state("submitted", override=reason) if reason else None
        if done is not None:
            self.next_unfinished()
            self.focus_viewer()  # the next keys are label and playback keys, not text

    def ask_override(self, missing, *, blocking: bool) -> str | None:
        """What the clip's captions miss; the override reason, or None to go back."""
        return ask_override(self, missing, blocking=blocking)

    def _leave_fields(self) -> None:
        """On clip change, move the cursor out of a caption or reason field: typing meant for
        one clip must never land in the next one's fields."""
        f = self.focusWidget()
        side = self.findChild(FocusRing, "clipSide")
        if f is not None and side is not None and side.isAncestorOf(f):
            self.focus_viewer()

    def settle_conflicts(self) -> bool:
        """Before leaving the clip: ask what to do with captions changed or deleted elsewhere.
        False when the person chose to stay."""
        conflicts = self.captions.conflicts
        n = len(conflicts)
        if not n:
            return True
        gone = sum(s.gone for s in conflicts)
        what = "deleted" if gone == n else "changed or deleted" if gone else "changed"
        box = QMessageBox(QMessageBox.Icon.Warning, "Captions changed elsewhere",
                          f"{n} of your captions on this clip {'was' if n == 1 else 'were'} "
                          f"{what} elsewhere while you typed, and your text is not saved.",
                          parent=self)
        keep = box.addButton("Keep mine", QMessageBox.ButtonRole.AcceptRole)
        take = box.addButton("Take theirs", QMessageBox.ButtonRole.DestructiveRole)
        box.addButton("Stay here", QMessageBox.ButtonRole.RejectRole)
        box.setDefaultButton(keep)
        box.exec()
        if box.clickedButton() is keep:
            self.captions.keep_mine()
        elif box.clickedButton() is take:
            self.captions.take_theirs()
        return not self.captions.conflicts

    # ---- frames, jobs and readiness ----------------------------------------------------
    @Slot(int, QImage)
    def _frame_shown(self, frame: int, image: QImage) -> None:
        self.viewer.show_frame(frame, image)
        self.flow.want(frame)
        self._part_ready("frame")

    def _part_ready(self, part: str) -> None:
        was = self._ready_parts >= {"frame", "thumbs", "motion"}
        self._ready_parts.add(part)
        if not was and self._ready_parts >= {"frame", "thumbs", "motion"}:
            self.ready.emit()

    @Slot()
    def _player_state(self) -> None:
        a = self.actions_
        a["play"].setIconText("Pause" if self.player.playing else "Play")
        self.timeline.loop = self.player.loop
        a["loop"].setChecked(self.player.loop is not None)
        self.timeline.update()

    def _show_saved(self, text: str, ok: bool | None) -> None:
        colour = {True: "#2e7d32", False: "#c62828", None: "palette(text)"}[ok]
        self.save_state.setStyleSheet(f"color: {colour};")
        self.save_state.setText(text)

    # ---- views, focus, help ------------------------------------------------------------
    def show_view(self, view: str) -> None:
        """"work", "review" or "board" (the review view on its agreement board tab)."""
        review = view in ("review", "board")
        if review and self.stack.currentIndex() == 0:
            self._work_state = self.saveState()  # the work view's docks, before they are hidden
        self.review_page.board_first = view == "board"
        self.stack.setCurrentIndex(1 if review else 0)
        self.actions_["work_view"].setChecked(not review)
        self.actions_["review_view"].setChecked(review)
        page = self.review_page.page
        if view == "board" and page is not None:
            page.show_board()  # starts computing the board in the background

    @property
    def review_desk(self) -> ReviewPage | QLabel | None:
        """A lead's review page once built (None before the first switch to the review view);
        for anyone else the note saying why there is none."""
        return self.review_page.page or self.review_page.refusal

    @property
    def in_review_view(self) -> bool:
        return self.stack.currentWidget() is self.review_page

    @Slot(int)
    def _view_switched(self, index: int) -> None:
        """Keep the work view's docks and shortcuts out of the review view's way. Only the
        page on show counts towards the window's minimum size, so a wide page hidden in the
        stack never widens the window of the other view."""
        size = self.size()
        for i in range(self.stack.count()):
            page, shown = self.stack.widget(i), i == index
            page.setSizePolicy(QSizePolicy.Policy.Preferred if shown else QSizePolicy.Policy.Ignored,
                               QSizePolicy.Policy.Preferred if shown else QSizePolicy.Policy.Ignored)
        if self.stack.widget(index) is self.review_page:
            self.player.pause()
            self.work_pause.hold()  # docks hidden first: the page must not count beside them
            page = self.review_page.build()
            if page is not None:
                page.focus_current()
        else:
            self.stack.layout().invalidate()  # the review page's minimum no longer counts
            self.work_pause.release()
            self.restoreState(self._work_state)  # the docks at the widths they had
        self.layout().activate()
        if self.width() > size.width() or self.height() > size.height():
            # the docks came back at their old widths beside the page's minimum: the window
            # keeps the size it had (the docks give way), so it never grows off the screen
            self.resize(size.expandedTo(self.minimumSizeHint()))

    @Slot(ReviewPage)
    def _review_built(self, page: ReviewPage) -> None:
        page.desk.status.connect(self._review_status)
        menu = self.menuBar().addMenu("&Review")
        for a in page.menu_actions():
            menu.addAction(a)

    @Slot(str)
    def _review_status(self, msg: str) -> None:
        """A desk message on the status bar; whether a decision was saved goes to the one
        place that says so (which otherwise would still say "Nothing changed yet")."""
        if msg.startswith(("Saved ", "Not saved")):
            self._show_saved(msg, msg.startswith("Saved "))
        else:
            self.statusBar().showMessage(msg, 8000)

    def focus_viewer(self) -> None:
        self.viewer.setFocus(Qt.FocusReason.ShortcutFocusReason)

    def focus_queue(self) -> None:
        self.queue.view.setFocus(Qt.FocusReason.ShortcutFocusReason)

    def all_actions(self) -> list:
        return list(self.actions_.values())

    def shortcut_sheet(self) -> ShortcutSheet:
        """The keys that work where the person is: in the review view, the review page's
        and the window's shared commands; in the work view, the work view's."""
        page = self.review_page.page
        if self.in_review_view and page is not None:
            shared = [self.actions_[n] for n in SHARED_ACTIONS if n in self.actions_]
            return ShortcutSheet(page.key_actions() + shared, self, extra_rows=page.key_rows(),
                                 title="Keyboard shortcuts — review view")
        return ShortcutSheet(self.all_actions(), self)

    def show_shortcuts(self) -> None:
        self.shortcut_sheet().exec()

    def open_other_project(self) -> None:
        """Choose another project in the start window; this window closes and it opens."""
        from ..dialogs.start import StartWindow, request_switch, take_switch
        chooser = StartWindow(settings=self.settings, parent=self)
        if chooser.exec() != QDialog.DialogCode.Accepted or chooser.chosen is None:
            return
        if chooser.chosen.resolve() == self.project.folder.resolve():
            return
        request_switch(chooser.chosen)
        if not self.close():  # refused: a caption conflict is still open
            take_switch()

    def show_setup(self) -> None:
        """The label set and videos; when anything changed, the window reopens on the project
        (label keys, buttons and the queue are built when the window is)."""
        from ..dialogs.setup import ProjectSetup
        from ..dialogs.start import request_switch, take_switch
        dialog = ProjectSetup(self.project, self)
        dialog.exec()
        if dialog.changed:
            request_switch(self.project.folder)
            if not self.close():  # refused: a caption conflict is still open
                take_switch()

    def show_cautions(self) -> None:
        CautionsNote(self).exec()

    # ---- remembering -------------------------------------------------------------------
    @Slot(int)
    def _moved(self, frame: int) -> None:
        if self.clip is not None:
            self.suggestions.frame_seen(frame, self.clip.frame_count)
        if not self._resume_timer.isActive():  # at most one write per RESUME_MS, even when playing
            self._resume_timer.start()

    def _write_resume(self) -> None:
        remember_project(self.settings, self.project.folder)
        if self.clip is not None:
            key = f"resume/{self.project.folder.resolve()}"
            self.settings.setValue(f"{key}/clip", self.clip.id)
            self.settings.setValue(f"{key}/frame", self.player.frame)
        self.settings.sync()

    def _restore_layout(self) -> None:
        """The saved size and the work view's docks as the person left them. A saved dock
        layout that does not restore, or one that hid every dock (never the person's doing
        in the work view), is dropped for the default one."""
        geo, state = self.settings.value("window/geometry"), self.settings.value(WORK_STATE_KEY)
        screen = self.screen() or QGuiApplication.primaryScreen()
        fit_window(self, screen.availableGeometry(), geo)
        self._work_state = self.saveState()  # the default layout
        docks = self.findChildren(QDockWidget)
        if state is None or not self.restoreState(state) or all(d.isHidden() for d in docks):
            self.restoreState(self._work_state)
            for d in docks:
                d.setHidden(False)

    def _save_layout(self) -> None:
        """Geometry, and the work view's dock layout as it was in the work view (the review
        view hides the docks; that is not the person's layout)."""
        self.settings.setValue("window/geometry", self.saveGeometry())
        self.settings.setValue(WORK_STATE_KEY,
                               self._work_state if self.in_review_view else self.saveState())

    def closeEvent(self, event: QCloseEvent) -> None:  # noqa: N802
        if not self.settle_conflicts():
            event.ignore()
            return
        self.captions.flush()
        self._write_resume()
        self._save_layout()
        self.settings.sync()
        self.jobs.cancel()
        self.suggestions.cancel()
        self.flow.close()
        self.player.close()
        self.jobs.wait()
        self.suggestions.wait()
        self.review_page.shutdown()
        super().closeEvent(event)
