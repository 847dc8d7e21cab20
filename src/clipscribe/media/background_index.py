"""The frame index of one open video, built on a background thread.

Kept apart from :mod:`clipscribe.media.video` because it is the one part of a ``Video`` that runs
on its own thread with its own demuxer: it never takes the decoder lock, and the decoder only asks
it two questions, "which index is complete?" and "which frames does the packet pass already
number?" (:meth:`BackgroundIndex.early`).
"""

from __future__ import annotations

import threading
import time
from collections.abc import Callable
from pathlib import Path

from .errors import JobCancelled, MediaError
from .index import FrameIndex, PacketScan, load_or_build_index

#: How long after opening a far request waits for the packet pass to start (its checks take a
#: fraction of a second) before it decodes forward from the start instead.
EARLY_WAIT_S = 1.0


class BackgroundIndex:
    """Builds (or loads) the index of ``path`` on a daemon thread as soon as it is made.

    ``untrusted()`` is called on that thread when the packet pass was offered to early requests
    but the finished index came from elsewhere (its frame numbers may differ), before the index is
    published; ``ready(index)`` is called after it is published and before :meth:`wait` returns,
    for work that needs the index but must not delay it (checks that decode).
    """

    def __init__(self, path: Path, *, index_dir: Path | None, untrusted: Callable[[], None],
                 ready: Callable[[FrameIndex], None]) -> None:
        self.path = path
        self._index_dir = index_dir
        self._untrusted = untrusted
        self._ready = ready
        self.index: FrameIndex | None = None
        self._error: BaseException | None = None
        self.done = threading.Event()  # set when the build ended, with or without an index
        self.stopping = threading.Event()
        self._scan: PacketScan | None = None  # the packet pass, once its checks passed
        self._scan_decided = threading.Event()  # set once it is known whether there is one
        self._opened_at = time.monotonic()
        self._provisional: FrameIndex | None = None
        self._thread = threading.Thread(target=self._work, daemon=True,
                                        name=f"frame-index {path.name}")
        self._thread.start()

    def wait(self, timeout: float | None = None) -> bool:
        """Block until the index is built (True) or ``timeout`` seconds pass (False).

        Raises the :class:`MediaError` that stopped the build, if one did.
        """
        self.done.wait(timeout)
        if isinstance(self._error, MediaError):
            raise self._error
        return self.index is not None

    def stop(self) -> None:
        """Cancel the build and wait (at most 10 s) for its thread."""
        self.stopping.set()
        self._thread.join(timeout=10)

    def _work(self) -> None:
        try:
            index = load_or_build_index(self.path, index_dir=self._index_dir,
                                        cancel=self.stopping, scan=PacketScan(),
                                        on_trusted=self._use_scan)
            if index.method != "packets" and self._scan is not None:
                self._untrusted()  # frames numbered from packets that proved untrustworthy
            self.index = index
            self._ready(index)
        except JobCancelled:
            pass
        except BaseException as exc:  # noqa: BLE001 - kept and re-raised by wait
            self._error = exc if isinstance(exc, MediaError) else MediaError(
                f"{self.path}: frame index failed: {exc}")
        finally:
            self.done.set()
            self._scan_decided.set()
            scan = self._scan
            if scan is not None:
                scan.publish()

    def _use_scan(self, scan: PacketScan | None) -> None:
        self._scan = scan
        self._scan_decided.set()

    def early(self, i: int) -> FrameIndex | None:
        """Before the index is ready: an index of the frames the packet pass has settled, once
        it covers frame ``i`` (waiting for the pass to get there), or None when the packets
        cannot be used (then the caller decodes forward)."""
        while not self.stopping.is_set():
            if self.index is not None:
                return self.index
            scan = self._scan
            if scan is None:
                left = EARLY_WAIT_S - (time.monotonic() - self._opened_at)
                if self._scan_decided.is_set() or left <= 0:
                    return None
                self._scan_decided.wait(min(left, 0.05))
                continue
            with scan.changed:
                ts, keys = scan.settled()
                if scan.problem is not None or (scan.done and not scan.usable(ts)):
                    return None
                if scan.usable(ts) and (len(ts) > i or scan.done):
                    old = self._provisional
                    if old is None or old.frame_count != len(ts):
                        old = FrameIndex(timestamps_ms=ts, keyframes=keys, method="packets")
                        self._provisional = old
                    return old
                scan.changed.wait(0.05)
        return None
