"""The lead's review page: the review desk and the agreement board, and the review view that
holds it in the workbench window (:class:`ReviewView`). A person who is not a lead gets a
message instead.

The page is built the first time the review view is shown, and the desk ranks its queue on the
worker pool, so opening the workbench on a big project costs nothing for the review view."""

from __future__ import annotations

from PySide6.QtCore import Qt, Signal
from PySide6.QtGui import QAction
from PySide6.QtWidgets import QFileDialog, QLabel, QTabWidget, QVBoxLayout, QWidget

from ...errors import NotALeadError
from ..workers import Job, JobRunner
from .board import AgreementBoard
from .desk import ReviewDesk, desk_action

REPORT_ACTION = "Write agreement report…"  # one name: menu, board button, messages


class ReviewPage(QTabWidget):
    """Two tabs: "Review desk" and "Agreement board"."""

    def __init__(self, project, parent: QWidget | None = None, *, n_boot: int = 1000,
                 board_first: bool = False) -> None:
        super().__init__(parent)
        self.setObjectName("reviewPage")
        self.project = project
        # opened on the board: the desk ranks by the agreement report after the board's
        self.desk = ReviewDesk(project, hold_report=board_first)
        self.board = AgreementBoard(project, n_boot=n_boot)
        self.addTab(self.desk, "&Review desk")
        self.addTab(self.board, "Agreement &board")
        self.runner = JobRunner(self)
        self.export_action = desk_action(self, REPORT_ACTION, "Ctrl+Shift+R",
                                         self.ask_export)
        self.board.exportRequested.connect(self.ask_export)
        self.currentChanged.connect(self._tab)
        self.board.ended.connect(self.desk.release_report)
        self._board_started = False

    def shutdown(self) -> None:
        self.desk.close_media()
        self.runner.wait()
        # stops the cues comparison, and the board between parts (a part under way runs out)
        self.board.runner.cancel_all()
        self.board.runner.wait()

    def _tab(self, i: int) -> None:
        if self.widget(i) is self.desk:
            self.desk.release_report()
        if self.widget(i) is self.board and not self._board_started:
            self._board_started = True
            self.board.refresh()
        self.focus_current()

    def focus_current(self) -> None:
        """The keyboard focus into the tab on show (the desk: its viewer), so the desk's keys
        (Alt+Down, the arrows) work without a click first."""
        if self.currentWidget() is self.desk:
            self.desk.viewer.setFocus(Qt.FocusReason.OtherFocusReason)

    def show_board(self) -> None:
        if not self._board_started and self.desk.report is None:
            self.desk.hold_report()  # the board's numbers first; the desk ranks after them
        self.setCurrentWidget(self.board)

    def menu_actions(self) -> list[QAction]:
        """The commands of the window's Review menu."""
        d = self.desk
        return [d.undo_action, d.redo_action, d.acts["next"], d.acts["prev"], d.acts["copy_track"],
                self.export_action]

    def key_actions(self) -> list[QAction]:
        """The commands with a key on this page (the shortcut sheet of the review view)."""
        return [*self.desk.key_actions(), self.export_action]

    @staticmethod
    def key_rows() -> list[tuple[str, str, str]]:
        """Keys of the page that are no action: the vote buttons' and the tabs' Alt keys."""
        from .desk import DESK_GROUP
        return [("Alt+1 … Alt+9", "Settle the label of annotator 1 … 9 (the numbered buttons)",
                 DESK_GROUP),
                ("Alt+R", "Show the review desk", "Review view"),
                ("Alt+B", "Show the agreement board", "Review view")]

    def ask_export(self) -> None:
        folder = QFileDialog.getExistingDirectory(self, "Folder for report.html and the CSV tables")
        if folder:
            self.export(folder)

    def export(self, folder: str) -> Job:
        """Write the report in the background; progress and the outcome go to ``status``."""
        from ...review_report import write_report
        p, say = self.project, self.desk.status.emit
        say("Writing the agreement report…")
        cues = self.board.cues  # "Which cues carry the labels", once the board has it
        job = Job("agreement report", lambda cancel, progress: write_report(p, folder, cues=cues))
        job.signals.finished.connect(lambda files: say(
            f"Report written to {files.html} with {len(files.csv)} CSV tables "
            f"({files.seconds:.1f} s)"))
        job.signals.failed.connect(lambda msg: say(f"Report not written: {msg}"))
        return self.runner.start(job)


def refusal_note(reason: str) -> QLabel:
    lab = QLabel(f"<h3>Review desk</h3><p>{reason}.</p><p>Only a lead reviews disagreements "
                 "and settles gold. Ask a lead of this project, or open it as a lead with "
                 "<code>--user NAME</code>.</p><p>Ctrl+1 returns to the work view.</p>")
    lab.setObjectName("reviewRefused")
    lab.setAlignment(Qt.AlignmentFlag.AlignCenter)
    lab.setWordWrap(True)
    return lab


class ReviewView(QWidget):
    """The review view of the workbench window. For a lead it holds the :class:`ReviewPage`,
    built by :meth:`build` (``page`` is None until then); for anyone else it shows a note
    saying why there is no desk (``refusal``)."""

    built = Signal(ReviewPage)  # once, when the page is made

    def __init__(self, project, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setObjectName("reviewHolder")
        self.project = project
        self.page: ReviewPage | None = None
        self.refusal: QLabel | None = None
        self.board_first = False  # the page, when built, opens on the agreement board
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        try:
            project.check_reviewer()
        except NotALeadError as exc:
            self.refusal = refusal_note(str(exc).capitalize())
            lay.addWidget(self.refusal)

    @property
    def is_reviewer(self) -> bool:
        return self.refusal is None

    def build(self) -> ReviewPage | None:
        """The page (made on the first call, for a lead); None for anyone else."""
        if self.page is None and self.is_reviewer:
            self.page = ReviewPage(self.project, board_first=self.board_first)
            self.layout().addWidget(self.page)
            self.page.show()  # at once, not on the next pass of the event loop
            self.built.emit(self.page)
        return self.page

    def shutdown(self) -> None:
        """Stop the page's decoder thread and jobs (the window is closing)."""
        if self.page is not None:
            self.page.shutdown()
