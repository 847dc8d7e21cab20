"""Frame-exact access to a video file: ``open_video(path) -> Video``.

Frame ``i`` is, by definition, the ``i``-th frame a plain sequential ``cv2.VideoCapture.read()``
loop yields. Random access seeks with OpenCV, then checks where it landed by looking the landed
frame's timestamp up in the frame index; a landing after the target (or one that cannot be
recognised) is retried from an earlier keyframe and, as a last resort, by decoding from the start.

Before the index is complete, the packets its demux-only pass has read so far already number
the frames (see :mod:`clipscribe.media.index`), so a request far ahead waits at most for that
pass to reach it, then seeks exactly; only a file whose packets cannot be trusted is decoded
forward from the start until its index is ready.

Once the index is complete, an H.264 file whose keyframes are IDR pictures is seeked by
decoding from the keyframe only the pictures the target depends on (see
:mod:`clipscribe.media.sparse`), after a check on the file that this gives the same pixels; the
decoder so positioned then steps forward as usual.

Stepping backward decodes a run of frames ending at the requested one (as many as the cache
holds) from the keyframe before it once, and keeps them for the steps after it.

Threading: every method may be called from any thread. One re-entrant lock guards the decoder
(the ``cv2.VideoCapture`` and the count of frames it has yielded); ``frame()`` holds it while it
decodes one requested frame, so a UI thread and a worker thread (or the read-ahead thread of
:mod:`clipscribe.media.read_ahead`) take turns frame by frame. The frame index is built on a
thread of its own with its own demuxer (:mod:`clipscribe.media.background_index`), never
holding that lock.
"""

from __future__ import annotations

import operator
import os
import threading
from collections.abc import Iterator
from pathlib import Path

import cv2
import numpy as np

from ._common import check_media_path, open_capture
from .background_index import BackgroundIndex
from .cache import DEFAULT_CACHE_BYTES, FrameCache
from .errors import MediaError
from .index import FrameIndex
from .read_ahead import ReadAhead
from .sparse import SparseCapture, sparse_matches

#: Targets at most this many frames ahead of the decoder are reached by decoding forward.
FORWARD_LIMIT = 64
#: Farther ahead in the same keyframe interval, decoding forward is chosen over a sparse seek
#: while it decodes fewer frames than this share of the way from the keyframe (about the share
#: of referenced pictures a sparse seek decodes in streams with B-frames) plus what opening the
#: second decoder costs, in frames (measured at 360p to 1080p: 10 to 25).
SPARSE_SHARE = 0.6
SPARSE_OPEN_FRAMES = 24
#: Sparse seeks are used where a seek decodes enough to pay for opening a second decoder and for
#: the check of the file: pixels per frame x mean keyframe interval of at least this much (a
#: 640x360 file with keyframes every 4 seconds at 30 frames per second; below it a usual seek
#: takes milliseconds).
SPARSE_MIN_WORK = 640 * 360 * 120
_AT_END = 1 << 62  # decoder position after it ran off the end: any request needs a seek


class Video:
    """An open video file with exact random access, a frame cache and a background frame index.

    Use :func:`open_video` to make one; close it (or use ``with``) to stop its threads.
    Frames are returned as read-only uint8 BGR arrays of shape (height, width, 3) shared with the
    cache; ``.copy()`` one before drawing on it. A frame never changes while anything holds the
    array or a numpy view of it; once nothing outside the cache does, its memory may be decoded
    into again, so keep the array (not only a raw pointer to its data) while using the pixels.
    """

    def __init__(self, path: str | os.PathLike, *, cache_bytes: int | None = None,
                 index_cache_dir: str | os.PathLike | None = None,
                 decoder_threads: int | None = None) -> None:
        self.path = check_media_path(path)
        self._lock = threading.RLock()
        self._threads = decoder_threads
        self._file_cap = open_capture(self.path, decoder_threads)
        #: the decoder frames come from: the file's capture, or a SparseCapture after a sparse seek
        self._cap: cv2.VideoCapture | SparseCapture = self._file_cap
        self._sparse_ok = False  # set once the index is ready and sparse seeks proved exact
        self._sparse_refused: set[int] = set()  # keyframes a sparse seek cannot start from
        ok, first = self._cap.read()
        if not ok or first is None:
            self._cap.release()
            raise MediaError(f"{self.path}: no decodable frame (truncated, damaged or "
                             "unsupported codec)")
        self._pos = 1  # number of frames the decoder has yielded since it was opened or landed
        self._fps = float(self._cap.get(cv2.CAP_PROP_FPS) or 0.0)
        self._header_count = max(int(self._cap.get(cv2.CAP_PROP_FRAME_COUNT) or 0), 1)
        self._size = (int(first.shape[1]), int(first.shape[0]))
        self.cache = FrameCache(DEFAULT_CACHE_BYTES if cache_bytes is None else cache_bytes)
        self.cache.put(0, first)
        self._closed = False
        self._bg = BackgroundIndex(
            self.path, index_dir=Path(index_cache_dir) if index_cache_dir is not None else None,
            untrusted=self._forget_early_frames, ready=self._check_sparse)
        self._read_ahead = ReadAhead(self.frame, self.cache, lambda: self._closed)
        #: Counters for tests and benchmarks: seeks tried, reopen-and-decode fallbacks, grabs,
        #: seeks made with the partial index of the packet pass, backward runs decoded.
        #: ``sparse_seeks`` counts the seeks (among ``seeks``) that decoded referenced pictures only.
        self.stats = {"seeks": 0, "reopens": 0, "grabs": 1, "early_seeks": 0, "back_runs": 0,
                      "sparse_seeks": 0}

    # -- facts ---------------------------------------------------------------------------------
    @property
    def fps(self) -> float:
        """Nominal frame rate from the header (per-frame times are in :attr:`index`)."""
        return self._fps if self._fps > 0 else 25.0

    @property
    def size(self) -> tuple[int, int]:
        """(width, height) of the decoded frames."""
        return self._size

    @property
    def frame_count(self) -> int:
        """The true frame count once the index is ready; the header's estimate before that."""
        idx = self._bg.index
        return idx.frame_count if idx is not None else self._header_count

    @property
    def index(self) -> FrameIndex | None:
        """The frame index, or None while it is being built."""
        return self._bg.index

    @property
    def index_ready(self) -> bool:
        return self._bg.index is not None

    @property
    def index_finished(self) -> bool:
        """True once the background build ended, with an index or without one (cancelled or
        failed: :meth:`wait_index` then raises or returns False)."""
        return self._bg.done.is_set()

    def wait_index(self, timeout: float | None = None) -> bool:
        """Block until the index is built (True) or ``timeout`` seconds pass (False).

        Raises the :class:`MediaError` that stopped the index build, if one did.
        """
        return self._bg.wait(timeout)

    def _forget_early_frames(self) -> None:
        """The packets that numbered frames before the index was ready proved untrustworthy:
        drop the frames cached under those numbers and the decoder's count (the next request
        seeks)."""
        with self._lock:
            self.cache.clear()
            self._pos = _AT_END

    def _check_sparse(self, index: FrameIndex) -> None:
        """On the index thread, once the index is ready: whether sparse seeks pay for themselves
        here (:data:`SPARSE_MIN_WORK`) and give the same pixels as a plain decode."""
        interval = index.frame_count / max(len(index.keyframes), 1)
        worth = (index.method == "packets"
                 and self._size[0] * self._size[1] * interval >= SPARSE_MIN_WORK)
        try:
            self._sparse_ok = worth and sparse_matches(self.path, index)
        except Exception:  # noqa: BLE001 - any trouble only means the usual seeks are used
            self._sparse_ok = False

    # -- frames --------------------------------------------------------------------------------
    def frame(self, i: int) -> np.ndarray:
        """Frame ``i`` in decode order: the same pixels as the ``i``-th ``read()`` of a fresh capture.

        Raises
        ------
        IndexError
            ``i < 0`` or ``i >= frame_count``.
        MediaError
            The video is closed or the frame cannot be decoded.
        """
        i = operator.index(i)
        if i < 0:
            raise IndexError(f"frame {i} out of range for {self.path}")
        with self._lock:
            if self._closed:
                raise MediaError(f"{self.path}: video is closed")
            arr = self.cache.get(i)
            if arr is None:
                arr = self._decode(i)
                self.cache.put(i, arr)
            return arr

    def warm_cache(self, *, most: int | None = None) -> bool:
        """Ready the memory the cache has yet to fill (see :meth:`FrameCache.warm`)."""
        return self.cache.warm((self._size[1], self._size[0], 3), self.frame_count, most=most)

    def frames(self, start: int = 0, stop: int | None = None) -> Iterator[np.ndarray]:
        """Yield frames ``start, start+1, ...`` up to ``stop`` (exclusive) or the end, for playback."""
        i = start
        while stop is None or i < stop:
            try:
                yield self.frame(i)
            except IndexError:
                return
            i += 1

    def prefetch(self, start: int, count: int) -> None:
        """Decode frames ``start .. start+count-1`` into the cache on a read-ahead thread.

        A new call replaces the previous read-ahead. It takes the decoder lock frame by frame, so
        :meth:`frame` calls from other threads wait at most one frame's decode.
        """
        self._read_ahead.start(start, count)

    # -- decoding (caller holds the lock) ------------------------------------------------------
    def _decode(self, i: int) -> np.ndarray:
        idx = self._bg.index
        if idx is None and not self._pos <= i <= self._pos + FORWARD_LIMIT:
            idx = self._bg.early(i)
            if idx is not None and idx is not self._bg.index and i < idx.frame_count:
                self.stats["early_seeks"] += 1
        if idx is not None and i >= idx.frame_count:  # the packet pass has read every packet
            raise IndexError(f"frame {i} out of range: {self.path} has {idx.frame_count} frames")
        if idx is None or not idx.seekable:
            if self._pos > i:
                self._reopen()
            return self._forward(i)
        if self._forward_is_cheaper(i, idx):
            return self._forward(i)
        if i < self._pos and i + 1 in self.cache:
            return self._backward_run(i, idx)
        return self._seek(i, idx)

    def _forward_is_cheaper(self, i: int, idx: FrameIndex) -> bool:
        ahead = i - self._pos
        if ahead < 0:
            return False
        if ahead <= FORWARD_LIMIT:
            return True
        key = idx.keyframe_at_or_before(i)
        if self._pos < key:
            return False
        sparse_cost = SPARSE_SHARE * (i - key) + SPARSE_OPEN_FRAMES
        return not (self._sparse_ok and idx is self._bg.index and ahead > sparse_cost)

    def _backward_run(self, i: int, idx: FrameIndex) -> np.ndarray:
        """Stepping backward: decode the frames before ``i`` that the cache can hold, up to and
        including ``i``, from their keyframe once, and keep them for the next steps back."""
        per_frame = max(1, self._size[0] * self._size[1] * 3)
        room = self.cache.budget // per_frame - 1  # frame i+1, on screen, stays cached
        start = max(idx.keyframe_at_or_before(i), i - room + 1, 0)
        if room < 2 or start >= i:
            return self._seek(i, idx)
        self.stats["back_runs"] += 1
        arr = self._seek(start, idx)
        for j in range(start, i):
            self.cache.put(j, arr)
            arr = self._forward(j + 1)
        return arr

    def _forward(self, i: int) -> np.ndarray:
        """Grab without colour conversion up to frame ``i``, then retrieve it."""
        cap = self._cap
        self.stats["grabs"] += i - self._pos + 1
        while self._pos <= i:
            if not cap.grab():
                self._ran_off_end(i)
            self._pos += 1
        arr = self._retrieve(cap)
        if arr is None:
            raise MediaError(f"{self.path}: frame {i} could not be decoded")
        return arr

    def _retrieve(self, cap: cv2.VideoCapture | SparseCapture) -> np.ndarray | None:
        """The grabbed frame, decoded into an array the cache gives up where it has one."""
        w, h = self._size
        spare = self.cache.spare((h, w, 3))
        ok, arr = cap.retrieve() if spare is None else cap.retrieve(spare)
        return arr if ok else None

    def _ran_off_end(self, i: int) -> None:
        count = self._pos
        self._pos = _AT_END
        idx = self._bg.index
        if idx is not None and i < idx.frame_count:
            raise MediaError(f"{self.path}: decoding stopped at frame {count}, but the index "
                             f"has {idx.frame_count} frames (file changed or damaged?)")
        raise IndexError(f"frame {i} out of range: {self.path} has {count} frames")

    def _use(self, cap: cv2.VideoCapture | SparseCapture) -> None:
        """Make ``cap`` the decoder, releasing a sparse one it replaces."""
        if self._cap is not cap and self._cap is not self._file_cap:
            self._cap.release()
        self._cap = cap

    def _reopen(self) -> None:
        self.stats["reopens"] += 1
        self._file_cap.release()
        self._file_cap = open_capture(self.path, self._threads)
        self._use(self._file_cap)
        self._pos = 0

    def _sparse_seek(self, i: int, idx: FrameIndex) -> np.ndarray | None:
        """Frame ``i`` from a decoder given only the pictures it depends on, or None."""
        raw = None
        if isinstance(self._cap, SparseCapture):
            raw = self._cap.take_demuxer()
            self._cap = self._file_cap
        sparse = SparseCapture.open_at(self.path, idx, i, self._threads, raw=raw)
        if sparse is None:
            self._sparse_refused.add(idx.keyframe_at_or_before(i))
            return None
        self.stats["seeks"] += 1
        self.stats["sparse_seeks"] += 1
        self._use(sparse)
        self._pos = i + 1
        arr = self._retrieve(sparse)
        if arr is None:
            self._use(self._file_cap)
            self._pos = _AT_END
            return None
        return arr

    def _seek(self, i: int, idx: FrameIndex) -> np.ndarray:
        """Seek near ``i``, learn the landed frame from its timestamp, decode forward to ``i``."""
        if (self._sparse_ok and idx is self._bg.index
                and idx.keyframe_at_or_before(i) not in self._sparse_refused):
            arr = self._sparse_seek(i, idx)
            if arr is not None:
                return arr
        self._use(self._file_cap)
        cap = self._file_cap
        for target in idx.seek_targets(i):
            self.stats["seeks"] += 1
            cap.set(cv2.CAP_PROP_POS_FRAMES, idx.opencv_number(target, self.fps))
            if not cap.grab():
                continue
            landed = idx.locate(cap.get(cv2.CAP_PROP_POS_MSEC))
            if landed is None or landed > i:
                continue
            self._pos = landed + 1
            if landed == i:
                arr = self._retrieve(cap)
                if arr is not None:
                    return arr
                break
            return self._forward(i)
        self._reopen()
        return self._forward(i)

    # -- lifetime ------------------------------------------------------------------------------
    def close(self) -> None:
        """Stop the index and read-ahead threads and release the decoder. Safe to call twice."""
        self._bg.stopping.set()  # first: a read-ahead may be waiting for the packet pass
        self._read_ahead.cancel()
        self._bg.stop()
        with self._lock:
            if not self._closed:
                self._closed = True
                self._use(self._file_cap)
                self._file_cap.release()
                self.cache.clear()

    def __enter__(self) -> Video:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def __repr__(self) -> str:
        w, h = self._size
        return f"Video({str(self.path)!r}, {w}x{h}, {self.frame_count} frames, {self.fps:g} fps)"


def open_video(path: str | os.PathLike, *, cache_bytes: int | None = None,
               index_cache_dir: str | os.PathLike | None = None,
               decoder_threads: int | None = None) -> Video:
    """Open a video for frame-exact access.

    Parameters
    ----------
    path : path-like
        The video file (any container and codec the OpenCV FFmpeg backend decodes).
    cache_bytes : int, optional
        Byte budget of the decoded-frame cache (default 128 MiB: about 48 frames of 720p or
        21 of 1080p); the cache never exceeds it.
    index_cache_dir : path-like, optional
        Folder for cached frame indexes, keyed by the file's SHA-256 (default
        ``platformdirs.user_cache_dir("clipscribe")/frame-index``).
    decoder_threads : int, optional
        Threads of the FFmpeg decoder (default: FFmpeg's choice, one per core); background
        work uses 1 so that it leaves the other cores to the viewer.

    Returns
    -------
    Video
        Frame 0 is already decoded; the frame index builds in a background thread.

    Raises
    ------
    MediaError
        Missing, empty, truncated, non-video or undecodable file; the message names the file.
    """
    return Video(path, cache_bytes=cache_bytes, index_cache_dir=index_cache_dir,
                 decoder_threads=decoder_threads)
