"""Read-ahead for playback: one thread at a time asks a video for the frames about to be shown.

Kept apart from :mod:`clipscribe.media.video` because it only drives a ``Video`` from outside,
through ``frame()``: it holds no decoder state, and ``frame()`` takes the decoder lock frame by
frame, so a request from another thread waits at most one frame's decode.
"""

from __future__ import annotations

import threading
from collections.abc import Callable, Container

from .errors import MediaError


class ReadAhead:
    """Runs ``fetch(i)`` for a range of frames on a daemon thread; a new run replaces the last."""

    def __init__(self, fetch: Callable[[int], object], cached: Container[int],
                 closed: Callable[[], bool]) -> None:
        self._fetch = fetch
        self._cached = cached
        self._closed = closed
        self._thread: threading.Thread | None = None
        self._stop = threading.Event()

    def start(self, start: int, count: int) -> None:
        """Fetch frames ``start .. start+count-1`` that are not cached yet, in order, stopping
        at the end of the video, on a decoding error, at :meth:`cancel` or at the next start."""
        self.cancel()
        stop = threading.Event()
        self._stop = stop

        def work() -> None:
            for i in range(max(start, 0), start + count):
                if stop.is_set() or self._closed():
                    return
                if i in self._cached:
                    continue
                try:
                    self._fetch(i)
                except (IndexError, MediaError):
                    return

        self._thread = threading.Thread(target=work, daemon=True, name="frame read-ahead")
        self._thread.start()

    def join(self, timeout: float | None = None) -> None:
        """Wait for the current run to end (tests, and :meth:`cancel`)."""
        t = self._thread
        if t is not None and t is not threading.current_thread():
            t.join(timeout)

    def cancel(self) -> None:
        self._stop.set()
        self.join(timeout=10)
