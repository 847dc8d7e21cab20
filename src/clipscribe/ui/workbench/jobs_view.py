"""The background jobs of the clip on screen: thumbnail strip and motion curve.

They run as background work (lowered thread priority, one decoder thread), so the viewer's
decoder keeps the CPU it needs, and share their results through the project's folder beside
its media when one is given."""

from __future__ import annotations

from pathlib import Path

from PySide6.QtCore import QObject, Signal, Slot

from ...media import motion_curve, thumbnail_strip
from ..images import bgr_to_qimage
from ..workers import Job, JobRunner

THUMBS = 24
THUMB_H = 56


def _thumbs(path: Path, shared: Path | None, *, cancel, progress):
    # runs on a worker thread: decode, scale and convert to QImage there
    return [bgr_to_qimage(t) for t in thumbnail_strip(
        path, THUMBS, height=THUMB_H, cancel=cancel, progress=progress,
        shared_cache_dir=shared, background=True)]


def _motion(path: Path, shared: Path | None, *, cancel, progress):
    return motion_curve(path, method="flow", cancel=cancel, progress=progress,
                        shared_cache_dir=shared, background=True)


class ClipJobs(QObject):
    thumbnailsReady = Signal(list)
    curveReady = Signal(object)
    progressText = Signal(str)
    failed = Signal(str)

    def __init__(self, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.runner = JobRunner(self)
        self._generation = 0
        self._progress: dict[str, float] = {}

    def start(self, path: Path, shared: Path | None = None) -> None:
        """Start both jobs for ``path``; results of jobs of an earlier clip are ignored.
        ``shared``: the project's shared result folder (see ``media.shared_cache_dir``)."""
        self.cancel()
        self._generation += 1
        gen = self._generation
        self._progress = {"thumbnails": 0.0, "motion": 0.0}
        for name, fn, done in (("thumbnails", _thumbs, self.thumbnailsReady),
                               ("motion", _motion, self.curveReady)):
            job = Job(f"{name} of {path.name}", lambda cancel, progress, f=fn: f(
                path, shared, cancel=cancel, progress=progress))
            job.signals.progress.connect(
                lambda d, t, n=name, g=gen: self._on_progress(g, n, d / max(1, t)))
            job.signals.finished.connect(
                lambda out, n=name, g=gen, sig=done: self._on_done(g, n, out, sig))
            job.signals.failed.connect(lambda msg, g=gen: g == self._generation and self.failed.emit(msg))
            self.runner.start(job)
        self.progressText.emit("Preparing thumbnails and motion…")

    def _on_progress(self, gen: int, name: str, fraction: float) -> None:
        if gen != self._generation:
            return
        self._progress[name] = fraction
        self._say()

    def _on_done(self, gen: int, name: str, out, signal) -> None:
        if gen != self._generation:
            return
        self._progress.pop(name, None)
        signal.emit(out)
        self._say()

    def _say(self) -> None:
        parts = [f"{n} {round(100 * f)}%" for n, f in self._progress.items()]
        self.progressText.emit(("Working: " + ", ".join(parts)) if parts else "")

    @Slot()
    def cancel(self) -> None:
        self.runner.cancel_all()

    def wait(self, msecs: int = 10000) -> bool:
        return self.runner.wait(msecs)
