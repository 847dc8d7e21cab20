"""Work off the UI thread: a frame loader that owns the open video, and cancellable jobs.

The frame loader keeps only the newest request: while it decodes frame 10 the UI may ask for
11, 12 and 13; when 10 is done it decodes 13 and never 11 or 12, so scrubbing stays live.
"""

from __future__ import annotations

import threading
import traceback
from collections.abc import Callable
from pathlib import Path
from typing import Any

from PySide6.QtCore import QObject, QRunnable, QThread, QThreadPool, Signal, Slot
from PySide6.QtGui import QImage

from ..media import JobCancelled, MediaError, open_video
from .images import bgr_to_qimage

READ_AHEAD = 24  # frames decoded ahead while playing


class FrameLoader(QThread):
    """Owns one :class:`Video`; decodes the newest requested frame and emits it."""

    frameReady = Signal(int, QImage)       # frame number, image
    opened = Signal(int, float, int, int)  # frame count, fps, width, height
    failed = Signal(str)

    def __init__(self, path: Path, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.path = Path(path)
        self._cond = threading.Condition()
        self._wanted: int | None = None
        self._ahead = False
        self._stop = False
        self.dropped = 0  # requests superseded before they were decoded (for tests)

    def request(self, frame: int, *, playing: bool = False) -> None:
        """Ask for ``frame``; any older request not yet started is dropped."""
        with self._cond:
            if self._wanted is not None:
                self.dropped += 1
            self._wanted, self._ahead = frame, playing
            self._cond.notify()

    def stop(self) -> None:
        with self._cond:
            self._stop = True
            self._cond.notify()
        self.wait(5000)

    def run(self) -> None:  # worker thread
        try:
            video = open_video(self.path)
        except (MediaError, OSError) as exc:
            self.failed.emit(str(exc))
            return
        try:
            w, h = video.size
            self.opened.emit(video.frame_count, video.fps, w, h)
            warming = True  # while idle, one frame's memory at a time (see Video.warm_cache)
            while True:
                with self._cond:
                    while self._wanted is None and not self._stop and not warming:
                        self._cond.wait()
                    if self._stop:
                        return
                    i, ahead, self._wanted = self._wanted, self._ahead, None
                if i is None:
                    warming = video.warm_cache(most=1)
                    continue
                try:
                    image = bgr_to_qimage(video.frame(i))
                except (MediaError, IndexError, ValueError) as exc:
                    self.failed.emit(f"frame {i}: {exc}")
                    continue
                self.frameReady.emit(i, image)
                if ahead:
                    video.prefetch(i + 1, READ_AHEAD)
        finally:
            video.close()


class JobSignals(QObject):
    progress = Signal(int, int)
    partial = Signal(object)   # part of the result, before ``finished`` brings the whole
    finished = Signal(object)
    failed = Signal(str)
    cancelled = Signal()


class Job(QRunnable):
    """Run ``fn(cancel=event, progress=callback)`` on the thread pool; report by signals."""

    def __init__(self, name: str, fn: Callable[..., Any]) -> None:
        super().__init__()
        self.name = name
        self.fn = fn
        self.cancel_event = threading.Event()
        self.signals = JobSignals()
        self.setAutoDelete(False)

    def cancel(self) -> None:
        self.cancel_event.set()

    def run(self) -> None:  # worker thread
        try:
            out = self.fn(cancel=self.cancel_event,
                          progress=lambda done, total: self.signals.progress.emit(done, total))
        except JobCancelled:
            self.signals.cancelled.emit()
        except (MediaError, OSError, ValueError) as exc:
            self.signals.failed.emit(f"{self.name}: {exc}")
        except Exception:  # a bug: keep the UI alive and say what broke
            self.signals.failed.emit(f"{self.name}: {traceback.format_exc(limit=2)}")
        else:
            self.signals.finished.emit(out)


class JobRunner(QObject):
    """Starts jobs on a private pool and keeps them alive until they end."""

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.pool = QThreadPool(self)
        self.pool.setMaxThreadCount(2)
        self._jobs: set[Job] = set()

    def start(self, job: Job) -> Job:
        self._jobs.add(job)
        for sig in (job.signals.finished, job.signals.failed, job.signals.cancelled):
            sig.connect(lambda *_, j=job: self._jobs.discard(j))
        self.pool.start(job)
        return job

    @Slot()
    def cancel_all(self) -> None:
        for job in list(self._jobs):
            job.cancel()

    def wait(self, msecs: int = 10000) -> bool:
        return self.pool.waitForDone(msecs)

    def idle(self) -> bool:
        """No job started here is still queued or running (their end signals delivered)."""
        return not self._jobs
