"""The lead's review page: the review desk and the agreement board, installed into the workbench
window with :func:`install_review_desk`. A person who is not a lead gets a message instead.

The page is built the first time the review view is shown, and the desk ranks its queue on the
worker pool, so opening the workbench on a big project costs nothing for the review view."""

from __future__ import annotations

from PySide6.QtCore import QEvent, QObject, Qt
from PySide6.QtWidgets import QDockWidget, QFileDialog, QLabel, QTabWidget, QVBoxLayout, QWidget

from ...project.review import NotALeadError
from ..workers import Job, JobRunner
from .board import AgreementBoard
from .desk import ReviewDesk, desk_action

#: workbench actions that stay live on the review page (the rest act on the work view's clip)
SHARED_ACTIONS = ("work_view", "review_view", "shortcuts", "cautions", "quit", "export")


REPORT_ACTION = "Write agreement report…"  # one name: menu, board button, messages


class ReviewPage(QTabWidget):
    """Two tabs: "Review desk" and "Agreement board"."""

    def __init__(self, project, parent: QWidget | None = None, *, n_boot: int = 1000) -> None:
        super().__init__(parent)
        self.setObjectName("reviewPage")
        self.project = project
        self.desk = ReviewDesk(project)
        self.board = AgreementBoard(project, n_boot=n_boot)
        self.addTab(self.desk, "&Review desk")
        self.addTab(self.board, "Agreement &board")
        self.runner = JobRunner(self)
        self.export_action = desk_action(self, REPORT_ACTION, "Ctrl+Shift+R",
                                         self.ask_export)
        self.board.exportRequested.connect(self.ask_export)
        self.currentChanged.connect(self._tab)
        self._board_started = False

    def shutdown(self) -> None:
        self.desk.close_media()
        self.runner.wait()
        self.board.runner.wait()

    def _tab(self, i: int) -> None:
        if self.widget(i) is self.board and not self._board_started:
            self._board_started = True
            self.board.refresh()

    def show_board(self) -> None:
        self.setCurrentWidget(self.board)

    def ask_export(self) -> None:
        folder = QFileDialog.getExistingDirectory(self, "Folder for report.html and the CSV tables")
        if folder:
            self.export(folder)

    def export(self, folder: str) -> Job:
        """Write the report in the background; progress and the outcome go to ``status``."""
        from ...review_report import write_report
        p, say = self.project, self.desk.status.emit
        say("Writing the agreement report…")
        job = Job("agreement report", lambda cancel, progress: write_report(p, folder))
        job.signals.finished.connect(lambda files: say(
            f"Report written to {files.html} with {len(files.csv)} CSV tables "
            f"({files.seconds:.1f} s)"))
        job.signals.failed.connect(lambda msg: say(f"Report not written: {msg}"))
        return self.runner.start(job)


class _Closer(QObject):
    """Stops the page's decoder thread and jobs when the window closes."""

    def __init__(self, page: "ReviewPage") -> None:
        super().__init__(page)
        self.page = page

    def eventFilter(self, obj, event) -> bool:  # noqa: N802
        if event.type() == QEvent.Type.Close:
            self.page.shutdown()
        return False


def refusal(project, reason: str) -> QLabel:
    lab = QLabel(f"<h3>Review desk</h3><p>{reason}.</p><p>Only a lead reviews disagreements "
                 "and settles gold. Ask a lead of this project, or open it as a lead with "
                 "<code>--user NAME</code>.</p><p>Ctrl+1 returns to the work view.</p>")
    lab.setObjectName("reviewRefused")
    lab.setAlignment(Qt.AlignmentFlag.AlignCenter)
    lab.setWordWrap(True)
    return lab


def _say(window, msg: str) -> None:
    """A desk message on the window's status bar; whether a decision was saved goes to the
    one place that says so (which otherwise would still say "Nothing changed yet")."""
    if msg.startswith(("Saved ", "Not saved")):
        window._show_saved(msg, msg.startswith("Saved "))
    else:
        window.statusBar().showMessage(msg, 8000)


def _build_page(window, holder: QWidget) -> "ReviewPage":
    page = ReviewPage(window.project)
    holder.layout().addWidget(page)
    page.show()  # at once, not on the next pass of the event loop
    page.desk.status.connect(lambda msg: _say(window, msg))
    window.installEventFilter(_Closer(page))
    menu = window.menuBar().addMenu("&Review")
    for a in (page.desk.undo_action, page.desk.redo_action, page.desk.acts["next"],
              page.desk.acts["prev"], page.desk.acts["copy_track"], page.export_action):
        menu.addAction(a)
    window.review_desk = page
    return page


def install_review_desk(window, *, view: str = "work") -> QWidget:
    """Put the review page into ``window`` (a workbench MainWindow) and keep the work view's
    docks and shortcuts out of its way while it shows. For a lead the page itself is built on
    the first switch to the review view (``window.review_desk`` is None until then); the
    returned widget is its holder."""
    p = window.project
    window.review_desk = None
    try:
        p.check_reviewer()
        page = QWidget()
        page.setObjectName("reviewHolder")
        QVBoxLayout(page).setContentsMargins(0, 0, 0, 0)
        build = lambda: window.review_desk or _build_page(window, page)  # noqa: E731
    except NotALeadError as exc:
        page = window.review_desk = refusal(p, str(exc).capitalize())
        build = lambda: page  # noqa: E731
    window.set_review_view(page)
    hidden: list[QDockWidget] = []
    was_enabled: dict[str, bool] = {}

    def switched(i: int) -> None:
        review = window.stack.widget(i) is page
        if review:
            build()
        if review and not was_enabled:
            for name, a in window.actions_.items():
                if name not in SHARED_ACTIONS:
                    was_enabled[name] = a.isEnabled()
                    a.setEnabled(False)
        elif not review and was_enabled:
            stack = window.editor.undo_stack
            for name, on in was_enabled.items():
                window.actions_[name].setEnabled(
                    {"undo": stack.canUndo(), "redo": stack.canRedo()}.get(name, on))
            was_enabled.clear()
        if review:
            window.player.pause()
            for d in window.findChildren(QDockWidget):
                if not d.isHidden():
                    hidden.append(d)
                    d.hide()
        else:
            while hidden:
                hidden.pop().show()

    window.stack.currentChanged.connect(switched)
    window.show_view(view)
    switched(window.stack.currentIndex())
    return page
