"""Pictures of the review page for the docs and tests:
``python -m clipscribe.ui.review.shots DIR OUT.png [--board] [--user NAME]``.

``--board`` shows the agreement board (computed on this thread so the picture is complete);
otherwise the review desk on the most disputed clip, once its frame is on screen."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from PySide6.QtCore import QSettings, QTimer

SIZE = (1440, 900)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m clipscribe.ui.review.shots")
    ap.add_argument("project")
    ap.add_argument("out")
    ap.add_argument("--board", action="store_true")
    ap.add_argument("--user")
    args = ap.parse_args(argv)
    from ... import Project
    from ..app import application, open_window
    app = application()
    project = Project.open(args.project, user=args.user)
    ini = Path(args.out).with_suffix(".ini")
    settings = QSettings(str(ini), QSettings.Format.IniFormat)
    settings.clear()
    window = open_window(project, view="review", settings=settings)
    window.resize(*SIZE)
    window.show()
    page = window.review_desk
    code = 0

    def grab() -> None:
        nonlocal code
        app.processEvents()
        if not window.grab().save(args.out, "PNG"):
            code = 1
        window.close()
        app.quit()

    if args.board and hasattr(page, "board"):
        page.blockSignals(True)  # no background computation: load it here
        page.show_board()
        page.blockSignals(False)
        page.board.load_now()
        QTimer.singleShot(300, grab)
    elif hasattr(page, "desk"):
        page.desk.ready.connect(lambda: QTimer.singleShot(300, grab))  # ranked, frame shown
        QTimer.singleShot(15000, grab)
    else:
        QTimer.singleShot(300, grab)
    app.exec()
    project.close()
    ini.unlink(missing_ok=True)
    return code


if __name__ == "__main__":
    sys.exit(main())
