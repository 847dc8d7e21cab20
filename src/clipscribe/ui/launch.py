"""A window at once: ``clipscribe open DIR`` shows a small "Opening …" window as soon as Qt is
up, before the project and the workbench's modules are loaded behind it, so a launch never
leaves the screen empty for seconds. Imports only Qt."""

from __future__ import annotations

import sys
from pathlib import Path

_shown: list = []  # the indicator on screen, if any


def show_opening(folder) -> None:
    """Show the indicator for ``folder`` (the QApplication is made here when there is none)."""
    from PySide6.QtCore import QCoreApplication, Qt
    from PySide6.QtWidgets import QApplication, QLabel, QProgressBar, QVBoxLayout, QWidget

    from .boot import APPLICATION, ORGANISATION
    QCoreApplication.setOrganizationName(ORGANISATION)
    QCoreApplication.setApplicationName(APPLICATION)
    app = QApplication.instance() or QApplication(sys.argv[:1])
    name = Path(folder).name or str(folder)
    w = QWidget(None, Qt.WindowType.Window)
    w.setObjectName("opening")
    w.setWindowTitle(f"clipscribe — opening {name}…")
    lay = QVBoxLayout(w)
    lay.setContentsMargins(24, 20, 24, 20)
    lay.addWidget(QLabel(f"Opening <b>{name}</b>…"))
    bar = QProgressBar()
    bar.setRange(0, 0)  # busy: how long it takes is not known
    bar.setTextVisible(False)
    lay.addWidget(bar)
    w.resize(360, w.sizeHint().height())
    w.show()
    app.processEvents()
    _shown[:] = [w]


def dismiss() -> None:
    """Close the indicator (the workbench or the start window is on screen now)."""
    while _shown:
        w = _shown.pop()
        w.close()
        w.deleteLater()


def showing() -> bool:
    return bool(_shown)
