"""Starting the workbench: ``clipscribe open DIR`` ends up in :func:`run`."""

from __future__ import annotations

import os
import signal
import sys
import threading
from contextlib import contextmanager
from pathlib import Path

from PySide6.QtCore import QCoreApplication, QSettings, QTimer
from PySide6.QtGui import QIcon
from PySide6.QtWidgets import QApplication


from .. import Project
from ..errors import ProjectError, RecordError
from . import gc_guard
from .boot import APPLICATION, ORGANISATION
from .theme import STYLE_SHEET

ICON = Path(__file__).with_name("assets") / "clipscribe.svg"
SCREENSHOT_SIZE = (1440, 900)
SCREENSHOT_TIMEOUT_MS = 20000


def application() -> QApplication:
    """The running QApplication, made (and named, for QSettings) on first use."""
    QCoreApplication.setOrganizationName(ORGANISATION)
    QCoreApplication.setApplicationName(APPLICATION)
    app = QApplication.instance() or QApplication(sys.argv[:1])
    app.setStyleSheet(STYLE_SHEET)
    app.setWindowIcon(QIcon(str(ICON)))
    app.setDesktopFileName("clipscribe")  # matches clipscribe.desktop (Wayland app id)
    gc_guard.install(app)
    return app


def open_window(project: Project, *, view: str = "work", settings: QSettings | None = None):
    """The workbench window on ``view``: "work", "review" (the review desk) or "board" (the
    agreement board, the review view's second tab)."""
    from .workbench.main_window import MainWindow
    return MainWindow(project, settings=settings, view=view)


def run(folder: str | os.PathLike | None, *, user: str | None = None, view: str = "work",
        screenshot: str | os.PathLike | None = None, password: str | None = None,
        note: str = "") -> int:
    """Open the project in ``folder`` in the workbench; returns the exit code.

    With ``folder`` None the start window asks for one (open, make new, or build the sample;
    ``note`` says why it shows). A project that cannot be opened is reported on stderr and, in
    the window, brings the start window back with the reason. A project on a server that wants
    a password nobody gave is opened after a login dialog (cancelling it exits 0). With
    ``screenshot`` the window is drawn on the first clip, saved to that PNG file once the
    frame, thumbnails and motion curve are shown (or after a timeout), and the app quits; it
    never asks for anything and an unopenable project exits 2.
    """
    from . import launch
    from .dialogs import start
    app = application()
    with _quit_on_interrupt(app) as interrupted:
        code = _run(app, start, launch, folder, user=user, view=view, screenshot=screenshot,
                    password=password, note=note)
    if interrupted():
        print("clipscribe: interrupted; the window was closed and work in it saved",
              file=sys.stderr)
        return 130
    return code


@contextmanager
def _quit_on_interrupt(app: QApplication):
    """Ctrl+C in the terminal closes the windows the normal way (typing is saved, jobs are
    stopped) and ends the event loop; a second Ctrl+C ends it even if a window refused to
    close. Yields a function telling whether that happened."""
    hits = []

    def finish(first: bool) -> None:
        if first:
            app.closeAllWindows()
            if any(w.isVisible() for w in app.topLevelWidgets()):
                return  # a window asked something first; it closes when answered
        app.exit(130)

    def on_interrupt(_signum, _frame) -> None:
        hits.append(1)
        # from the event loop (also one that starts later), never from inside a handler
        QTimer.singleShot(0, lambda first=len(hits) == 1: finish(first))

    if threading.current_thread() is not threading.main_thread():
        yield lambda: False
        return
    old = signal.signal(signal.SIGINT, on_interrupt)
    tick = QTimer()  # hands control to Python now and then, so the handler can run
    tick.timeout.connect(lambda: None)
    tick.start(200)
    try:
        yield lambda: bool(hits)
    finally:
        tick.stop()
        signal.signal(signal.SIGINT, old)


def _run(app: QApplication, start, launch, folder, *, user, view, screenshot, password, note) -> int:
    code = 0
    while True:
        if folder is None:
            launch.dismiss()
            if screenshot:
                print("clipscribe: --screenshot needs a project folder", file=sys.stderr)
                return 2
            folder = start.choose_project(note)
            if folder is None:  # the start window was closed
                return code
        project, problem = _open(folder, user=user, password=password, ask=not screenshot)
        if problem is not None:
            print(f"clipscribe: {problem}", file=sys.stderr)
            if screenshot:
                return 2
            folder, note = None, problem  # back to the start window, saying why
            continue
        if project is None:  # the login was cancelled
            launch.dismiss()
            return code
        shown = Path(project.folder).resolve()
        login = (project.user, project.engine.url.password)  # a server login's, maybe asked for
        code = _show(app, project, view=view, screenshot=screenshot)
        project.close()
        folder = None if screenshot else start.take_switch()  # File > Open another project
        if folder is None:
            return code
        # the same project again (after Set up project) keeps its login; another starts afresh
        user, password = login if Path(folder).resolve() == shown else (None, None)
        view, note = "work", ""


def _open(folder, *, user, password, ask: bool) -> tuple[Project | None, str | None]:
    """(project or None if the login was cancelled, None) or (None, one line saying why not)."""
    from .dialogs.login import ask_with_dialog, open_project
    try:
        project = open_project(folder, user=user, password=password,
                               ask=ask_with_dialog if ask else None)
    except (ProjectError, RecordError) as exc:
        return None, (str(exc).splitlines() or [""])[0]
    if project is not None and project.role(project.user) is None:
        name = project.user
        project.close()
        return None, f"{name!r} is not a person in this project (add them, or pass --user NAME)"
    return project, None


def _show(app: QApplication, project: Project, *, view: str, screenshot) -> int:
    """Show the window on ``project`` until it closes (or render it to ``screenshot``)."""
    settings = QSettings()
    if screenshot:
        settings = QSettings(str(Path(screenshot).with_suffix(".ini")), QSettings.Format.IniFormat)
        settings.clear()  # a clean layout, and the first unfinished clip
    window = open_window(project, view=view, settings=settings)
    code = 0
    if screenshot:
        window.resize(*SCREENSHOT_SIZE)
        window.show()

        def grab() -> None:
            nonlocal code
            app.processEvents()
            image = window.grab()
            if not image.save(str(screenshot), "PNG"):
                print(f"clipscribe: could not write {screenshot}", file=sys.stderr)
                code = 1
            window.close()
            app.quit()

        done = {"fired": False}

        def once() -> None:
            if not done["fired"]:
                done["fired"] = True
                QTimer.singleShot(150, grab)  # let the last paint land

        page = window.review_page.page if view in ("review", "board") else None
        if page is not None and view == "board":  # computed in the background: wait
            page.board.loaded.connect(once)
        elif page is not None:  # the desk ranks its queue in the background: wait for it
            page.desk.ready.connect(once)
        elif view in ("review", "board"):  # the refusal note of a non-lead: nothing to wait for
            once()
        else:
            window.ready.connect(once)
            if window.clip is None:
                once()
        QTimer.singleShot(SCREENSHOT_TIMEOUT_MS, once)
        app.exec()
        Path(str(Path(screenshot).with_suffix(".ini"))).unlink(missing_ok=True)
    else:
        window.show()
        from .launch import dismiss
        dismiss()
        if project.role(project.user) == "lead" and not project.clip_count():
            QTimer.singleShot(0, window.show_setup)  # a new project: labels and videos first
        code = app.exec()
    return code
