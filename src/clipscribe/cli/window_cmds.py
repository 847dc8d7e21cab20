"""``clipscribe open``: the workbench window (or a screenshot of it). Qt and the project load
inside the command, after a first window is already on screen."""

from __future__ import annotations

import argparse
from pathlib import Path

from ..errors import ProjectError


def cmd_open(args: argparse.Namespace) -> int:
    from ..schema.settings import SETTINGS_FILE
    from ..ui.boot import check_bindings, check_qt_runtime, last_project
    folder, note = args.project, ""
    if folder is None:
        folder = last_project()
        if folder is not None and not (Path(folder) / SETTINGS_FILE).is_file():
            folder, note = None, f"The project opened last, {folder}, is no longer there."
        if folder is None and args.screenshot:
            raise ProjectError(note or "no project given and none opened before")
    problem = check_qt_runtime(screenshot=bool(args.screenshot)) or check_bindings()
    if problem:
        raise ProjectError(problem)
    if folder is not None and not args.screenshot:
        from ..ui.launch import show_opening
        show_opening(folder)  # on screen at once; the project and the workbench load behind it
    from ..ui.app import run
    # with no folder, the window starts by asking for one (open, new, or the sample)
    return run(folder, user=args.user, view=args.view, screenshot=args.screenshot, note=note)


def register(add) -> None:
    sp = add("open", cmd_open, "open the workbench window on a project", project=False, user=True)
    sp.add_argument("project", metavar="DIR", nargs="?",
                    help="project folder (default: the project opened last; with none, a start window asks)")
    sp.add_argument("--view", choices=("work", "review", "board"), default="work",
                    help="which view to open on: work, the review desk, or the agreement board")
    sp.add_argument("--screenshot", metavar="FILE.png", help="render the window to FILE.png and exit")
