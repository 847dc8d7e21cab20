"""The motion look: the optical flow of the frame on screen (from the frame before it), shown
in place of the picture or blended over it, with a colour-wheel legend. The flow is computed on
a worker thread; while frames move on, only the newest one is computed."""

from __future__ import annotations

import threading
from pathlib import Path

from PySide6.QtCore import QObject, Signal

from ...features.flow_picture import colour_wheel, flow_picture
from ..images import bgr_to_qimage
from ..workers import Job, JobRunner

#: picture -> flow in its place -> flow over the picture -> picture
MODES = ("off", "flow", "blend")
MODE_WORDS = {"off": "picture", "flow": "optical flow in place of the picture",
              "blend": "optical flow over the picture"}


class FlowLook(QObject):
    """Computes flow pictures for the viewer; ``mode`` is one of :data:`MODES`."""

    ready = Signal(int, object, float)   # frame, QImage of the flow, px/frame at full brightness
    failed = Signal(str)

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.runner = JobRunner(self)
        self.mode = "off"
        self.path: Path | None = None
        self._video = None
        self._lock = threading.Lock()   # one Video, used by one worker at a time
        self._generation = 0
        self._busy = False
        self._wanted: int | None = None
        self.legend = bgr_to_qimage(colour_wheel(72))

    def next_mode(self) -> str:
        self.mode = MODES[(MODES.index(self.mode) + 1) % len(MODES)]
        return self.mode

    def open(self, path: Path) -> None:
        self._generation += 1
        self.path, self._wanted = Path(path), None
        with self._lock:
            if self._video is not None:
                self._video.close()
            self._video = None

    def want(self, frame: int) -> None:
        """Compute the flow picture of ``frame`` (after the one running, if any)."""
        if self.mode == "off" or self.path is None:
            return
        self._wanted = frame
        if not self._busy:
            self._start()

    def _start(self) -> None:
        frame, self._wanted, gen, path = self._wanted, None, self._generation, self.path
        if frame is None:
            return
        self._busy = True
        job = Job(f"optical flow of frame {frame}",
                  lambda cancel, progress: self._compute(path, frame))
        job.signals.finished.connect(lambda out, g=gen: self._done(g, out))
        job.signals.failed.connect(lambda msg: (self._idle(), self.failed.emit(msg)))
        job.signals.cancelled.connect(self._idle)
        self.runner.start(job)

    def _compute(self, path: Path, frame: int):  # worker thread
        from ...media import open_video
        with self._lock:
            if self._video is None or Path(self._video.path) != path:
                self._video = open_video(path)
            pic = flow_picture(path, frame, video=self._video)
        return pic.frame, bgr_to_qimage(pic.image), pic.scale

    def _idle(self) -> None:
        self._busy = False
        if self._wanted is not None:
            self._start()

    def _done(self, gen: int, out) -> None:
        if gen == self._generation and self.mode != "off":
            self.ready.emit(*out)
        self._idle()

    def close(self) -> None:
        self.runner.cancel_all()
        self.runner.wait()
        with self._lock:
            if self._video is not None:
                self._video.close()
            self._video = None
