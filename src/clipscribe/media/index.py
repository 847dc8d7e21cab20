"""Frame index: the true frame count, per-frame timestamps and keyframes of a video file.

One sequential pass with ``cv2.VideoCapture.grab()`` (decode, no colour conversion) records the
presentation timestamp (``CAP_PROP_POS_MSEC``) of every frame the decoder yields, in the order a
plain ``read()`` loop yields them. A second, demux-only pass (``CAP_PROP_FORMAT = -1``, raw
packets, no decoding) records which packets the container flags as keyframes
(``CAP_PROP_LRF_HAS_KEY_FRAME``) and their timestamps; the decoded frames whose timestamp matches a
keyframe packet are the places a seek can land on. Where the raw pass gives nothing, frames whose
picture type (``CAP_PROP_FRAME_TYPE``) is ``'I'`` are used instead. Frame 0 is always a keyframe.

Indexes are cached as ``<sha256>.npz`` files so each file is indexed once.
"""

from __future__ import annotations

import io
import os
from dataclasses import dataclass, field
from pathlib import Path

import cv2
import numpy as np

from ._common import Cancel, Progress, atomic_write_bytes, check_cancel, default_cache_dir, report
from .errors import MediaError

INDEX_VERSION = 1
_TS_DECIMALS = 3  # timestamps are matched after rounding to a microsecond


def default_index_dir() -> Path:
    """``platformdirs.user_cache_dir("clipscribe")/frame-index``."""
    return default_cache_dir() / "frame-index"


@dataclass(frozen=True, eq=False)
class FrameIndex:
    """Per-frame facts of one video, in decode (``read()``) order.

    Attributes
    ----------
    timestamps_ms : ndarray of float64, shape (n,)
        ``CAP_PROP_POS_MSEC`` after grabbing each frame.
    keyframes : ndarray of int64
        Sorted frame numbers a seek may land on; always starts with 0.
    """

    timestamps_ms: np.ndarray
    keyframes: np.ndarray
    #: whether timestamps name frames one to one (set in __post_init__)
    seekable: bool = field(init=False, default=False, compare=False, repr=False)

    def __post_init__(self) -> None:
        keys = np.round(self.timestamps_ms, _TS_DECIMALS)
        lookup: dict[float, int] = {}
        dupes = False
        for i, t in enumerate(keys.tolist()):
            if t in lookup:
                dupes = True
            lookup[t] = i
        object.__setattr__(self, "_lookup", lookup)
        # Seeking needs to recognise where it landed; equal timestamps make that impossible.
        object.__setattr__(self, "seekable", not dupes and len(keys) > 0)

    @property
    def frame_count(self) -> int:
        return int(self.timestamps_ms.shape[0])

    def keyframe_at_or_before(self, i: int) -> int:
        """The last keyframe number ``<= i``."""
        pos = int(np.searchsorted(self.keyframes, i, side="right")) - 1
        return int(self.keyframes[max(pos, 0)])

    def locate(self, timestamp_ms: float) -> int | None:
        """The frame number with this timestamp, or None (unknown or ambiguous)."""
        if not self.seekable:
            return None
        return self._lookup.get(round(float(timestamp_ms), _TS_DECIMALS))  # type: ignore[attr-defined]

    def to_bytes(self) -> bytes:
        buf = io.BytesIO()
        np.savez(buf, version=np.int64(INDEX_VERSION), timestamps_ms=self.timestamps_ms,
                 keyframes=self.keyframes)
        return buf.getvalue()

    @classmethod
    def from_bytes(cls, data: bytes) -> FrameIndex:
        with np.load(io.BytesIO(data)) as z:
            if int(z["version"]) != INDEX_VERSION:
                raise ValueError("frame index written by another version")
            return cls(timestamps_ms=z["timestamps_ms"].astype(np.float64),
                       keyframes=z["keyframes"].astype(np.int64))


def _keyframe_timestamps(path: Path, cancel: Cancel) -> set[float]:
    """Timestamps of packets the container flags as keyframes (demux only, no decoding)."""
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG, [cv2.CAP_PROP_FORMAT, -1])
    out: set[float] = set()
    try:
        if not cap.isOpened():
            return out
        n = 0
        while cap.grab():
            if cap.get(cv2.CAP_PROP_LRF_HAS_KEY_FRAME):
                out.add(round(cap.get(cv2.CAP_PROP_POS_MSEC), _TS_DECIMALS))
            n += 1
            if n % 256 == 0:
                check_cancel(cancel, f"{path}: frame index")
    finally:
        cap.release()
    return out


def build_frame_index(path: str | os.PathLike, *, cancel: Cancel = None,
                      progress: Progress = None) -> FrameIndex:
    """Decode the file once, in order, and record every frame's timestamp and the keyframes.

    Parameters
    ----------
    path : path-like
        The video file.
    cancel : threading.Event or callable, optional
        Checked every few frames; raises :class:`~clipscribe.media.JobCancelled` when set.
    progress : callable, optional
        ``progress(done, total)`` where ``total`` is the header's frame count (an estimate).

    Returns
    -------
    FrameIndex
        ``frame_count`` equals the number of frames a ``read()`` loop yields.
    """
    p = Path(path)
    cap = cv2.VideoCapture(str(p), cv2.CAP_FFMPEG)
    stamps: list[float] = []
    itypes: list[int] = []
    try:
        if not cap.isOpened():
            raise MediaError(f"{p}: not a video OpenCV can open (unknown container or codec)")
        total = max(int(cap.get(cv2.CAP_PROP_FRAME_COUNT) or 0), 1)
        while cap.grab():
            n = len(stamps)
            stamps.append(cap.get(cv2.CAP_PROP_POS_MSEC))
            if int(cap.get(cv2.CAP_PROP_FRAME_TYPE)) == ord("I"):
                itypes.append(n)
            if n % 32 == 0:
                check_cancel(cancel, f"{p}: frame index")
                report(progress, n, max(total, n + 1))
    finally:
        cap.release()
    if not stamps:
        raise MediaError(f"{p}: no decodable frame (truncated or unsupported codec)")
    ts = np.asarray(stamps, dtype=np.float64)
    key_ts = _keyframe_timestamps(p, cancel)
    keys = [i for i, t in enumerate(np.round(ts, _TS_DECIMALS).tolist()) if t in key_ts]
    if not keys:
        keys = itypes
    keyframes = np.unique(np.asarray([0, *keys], dtype=np.int64))
    report(progress, len(stamps), len(stamps))
    return FrameIndex(timestamps_ms=ts, keyframes=keyframes)


def load_or_build_index(path: str | os.PathLike, sha256: str, *, index_dir: Path | None = None,
                        cancel: Cancel = None, progress: Progress = None) -> FrameIndex:
    """Return the cached index for this content hash, building and caching it when absent."""
    folder = Path(index_dir) if index_dir is not None else default_index_dir()
    target = folder / f"{sha256}.npz"
    if target.is_file():
        try:
            return FrameIndex.from_bytes(target.read_bytes())
        except Exception:  # noqa: BLE001 - a damaged or foreign cache file is rebuilt
            pass
    index = build_frame_index(path, cancel=cancel, progress=progress)
    try:
        atomic_write_bytes(target, index.to_bytes())
    except OSError:
        pass  # a read-only cache folder costs speed, not correctness
    return index
