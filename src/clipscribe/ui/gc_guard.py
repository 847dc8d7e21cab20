"""Collect Python garbage on the GUI thread only.

Python's cyclic garbage collector runs in whichever thread happens to allocate when a threshold
is crossed. When that is a worker thread and the garbage holds Qt objects that live on the GUI
thread (a closed dialog, a finished job's signals), Qt destroys them from the wrong thread and
the process can crash. So automatic collection is switched off and a timer on the GUI thread
collects instead, generation by generation, with the interpreter's own thresholds — the usual
remedy for Qt applications in Python.
"""

from __future__ import annotations

import gc

from PySide6.QtCore import QCoreApplication, QObject, QTimer

INTERVAL_MS = 250


class GuiThreadCollector(QObject):
    def __init__(self, app: QCoreApplication) -> None:
        super().__init__(app)
        self.thresholds = gc.get_threshold()
        gc.disable()
        self.timer = QTimer(self)
        self.timer.timeout.connect(self.collect)
        self.timer.start(INTERVAL_MS)

    def collect(self) -> None:
        t0, t1, t2 = self.thresholds
        c0, c1, c2 = gc.get_count()
        if c0 > t0:
            gc.collect(0)
            if c1 > t1:
                gc.collect(1)
                if c2 > t2:
                    gc.collect(2)


def install(app: QCoreApplication) -> GuiThreadCollector:
    """Install the collector once per application (idempotent)."""
    existing = app.findChild(GuiThreadCollector)
    return existing if existing is not None else GuiThreadCollector(app)
