"""Frame index: the true frame count, per-frame timestamps and keyframes of a video file.

Frame ``i`` is the ``i``-th frame a plain sequential ``read()`` loop yields. The index is built,
where it can be, without decoding: a demux-only pass (OpenCV's raw-packet mode,
``CAP_PROP_FORMAT = -1``) reads every packet's presentation timestamp (``CAP_PROP_POS_MSEC``) and
keyframe flag (``CAP_PROP_LRF_HAS_KEY_FRAME``). A decoder outputs its frames in presentation
order, one per packet, so the packets' timestamps, sorted, are the timestamps of the frames a
sequential decode yields, and a keyframe packet's timestamp names the frame a seek can land on.

That holds unless the decoder drops or adds frames. The cases we know of are checked before the
packet index is trusted, and for such a file the index comes from the decode pass instead (one
sequential ``grab()`` pass recording each decoded frame's timestamp), which is recorded in the
index (``method`` and ``note``):

- an MP4/MOV edit list that cuts into the media (the demuxer marks the cut packets, the decoder
  drops their frames), read from the file's ``elst`` box;
- a stream that does not start with a keyframe, or pictures shown before the first keyframe
  (B-frames of an open GOP at the start: decoders drop them);
- packets without distinct timestamps (a frame could not be named by its timestamp);
- and, for every file, the first frames are decoded and their timestamps compared with the packet
  index's (which catches decoders that report other times than the container).

Open GOPs further into the file and variable frame rates are fine: a sequential decode yields
those frames, and the packets carry their true times.

Indexes are cached as ``<key>.npz`` files so each file is indexed once.
"""

from __future__ import annotations

import hashlib
import io
import os
import threading
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import cv2
import numpy as np

from ._common import Cancel, Progress, atomic_write_bytes, check_cancel, default_cache_dir, report
from .edits import edit_list_problem
from .errors import MediaError

INDEX_VERSION = 2
_TS_DECIMALS = 3  # timestamps are matched after rounding to a microsecond
HEAD_FRAMES = 12  # frames decoded to check the packet index against the decoder
#: A packet's frame is final once this many later packets have been read (deeper reordering
#: than this does not occur in the codecs OpenCV decodes).
REORDER_WINDOW = 32


def default_index_dir() -> Path:
    """``platformdirs.user_cache_dir("clipscribe")/frame-index``."""
    return default_cache_dir() / "frame-index"


@dataclass(frozen=True, eq=False)
class FrameIndex:
    """Per-frame facts of one video, in decode (``read()``) order.

    Attributes
    ----------
    timestamps_ms : ndarray of float64, shape (n,)
        ``CAP_PROP_POS_MSEC`` of each frame.
    keyframes : ndarray of int64
        Sorted frame numbers a seek may land on; always starts with 0.
    method : str
        ``"packets"`` (demux-only pass) or ``"decode"`` (sequential decode pass).
    note : str
        Why the decode pass was needed (empty for the packet pass).
    """

    timestamps_ms: np.ndarray
    keyframes: np.ndarray
    method: str = "decode"
    note: str = ""
    #: whether timestamps name frames one to one (set in __post_init__)
    seekable: bool = field(init=False, default=False, compare=False, repr=False)

    def __post_init__(self) -> None:
        keys = np.round(self.timestamps_ms, _TS_DECIMALS).tolist()
        lookup = {t: i for i, t in enumerate(keys)}
        object.__setattr__(self, "_lookup", lookup)
        # Seeking needs to recognise where it landed; equal timestamps make that impossible.
        object.__setattr__(self, "seekable", 0 < len(lookup) == len(keys))

    @property
    def frame_count(self) -> int:
        return int(self.timestamps_ms.shape[0])

    def keyframe_at_or_before(self, i: int) -> int:
        """The last keyframe number ``<= i``."""
        pos = int(np.searchsorted(self.keyframes, i, side="right")) - 1
        return int(self.keyframes[max(pos, 0)])

    def seek_targets(self, i: int) -> list[int]:
        """Frames to aim an OpenCV seek at to reach ``i``, nearest first: ``i`` itself, its
        keyframe and the two keyframes before that (a seek may land after its target)."""
        key = self.keyframe_at_or_before(i)
        k = int(np.searchsorted(self.keyframes, key))
        return [i, key] + [int(f) for f in self.keyframes[max(k - 2, 0):k][::-1]]

    def opencv_number(self, i: int, fps: float) -> int:
        """The number OpenCV's ``CAP_PROP_POS_FRAMES`` gives frame ``i``: its presentation time
        (relative to frame 0) times the nominal rate."""
        ts = self.timestamps_ms
        return int(round((ts[i] - ts[0]) * fps / 1000.0))

    def locate(self, timestamp_ms: float) -> int | None:
        """The frame number with this timestamp, or None (unknown or ambiguous)."""
        if not self.seekable:
            return None
        return self._lookup.get(round(float(timestamp_ms), _TS_DECIMALS))  # type: ignore[attr-defined]

    def to_bytes(self) -> bytes:
        buf = io.BytesIO()
        np.savez(buf, version=np.int64(INDEX_VERSION), timestamps_ms=self.timestamps_ms,
                 keyframes=self.keyframes, method=np.str_(self.method), note=np.str_(self.note))
        return buf.getvalue()

    @classmethod
    def from_bytes(cls, data: bytes) -> FrameIndex:
        with np.load(io.BytesIO(data), allow_pickle=False) as z:
            if int(z["version"]) != INDEX_VERSION:
                raise ValueError("frame index written by another version")
            return cls(timestamps_ms=z["timestamps_ms"].astype(np.float64),
                       keyframes=z["keyframes"].astype(np.int64), method=str(z["method"]),
                       note=str(z["note"]))


# -- the packet pass ---------------------------------------------------------------------------
class PacketScan:
    """The packets of a file as the demux-only pass reads them, growing while it runs.

    Another thread may call :meth:`settled` at any time to get the frames known so far.
    """

    def __init__(self) -> None:
        self.pts: list[float] = []   # rounded ms, in decode (file) order
        self.keys: list[float] = []  # pts of keyframe packets
        self.problem: str | None = None  # why the packets cannot be trusted, once known
        self.done = False
        self.head: list[float] = []  # decoded timestamps of the first frames, for checking
        self.changed = threading.Condition()
        self._first_key: float | None = None

    def add(self, pts: float, key: bool) -> None:
        if not self.pts and not key:
            self.problem = "the stream does not start with a keyframe"
        if self._first_key is None:
            self._first_key = pts
        elif pts < self._first_key and self.problem is None:
            self.problem = "pictures shown before the first keyframe (open GOP at the start)"
        self.pts.append(pts)
        if key:
            self.keys.append(pts)

    def settled(self) -> tuple[np.ndarray, np.ndarray]:
        """(sorted timestamps of the frames that are final, their keyframe numbers).

        Frames whose timestamp lies below every timestamp of the last :data:`REORDER_WINDOW`
        packets are final; all are once the pass is done.
        """
        n = len(self.pts)
        pts = np.asarray(self.pts[:n], dtype=np.float64)
        keys = np.asarray(self.keys[:len(self.keys)], dtype=np.float64)
        ts = np.sort(pts)
        if not self.done:
            bound = pts[-REORDER_WINDOW:].min() if n >= REORDER_WINDOW else -np.inf
            ts = ts[:int(np.searchsorted(ts, bound, side="left"))]
        return ts, _key_numbers(ts, keys)

    def usable(self, ts: np.ndarray) -> bool:
        """Whether frames numbered from the settled timestamps ``ts`` may be used already:
        no problem seen so far and the decoder's first frames agree with them."""
        n = min(len(self.head), len(ts))
        return (self.problem is None and n > 0
                and (n == len(self.head) or self.done) and head_problem(self.head, ts) is None)

    def publish(self) -> None:
        with self.changed:
            self.changed.notify_all()


def _key_numbers(ts: np.ndarray, key_pts: np.ndarray) -> np.ndarray:
    pos = np.searchsorted(ts, key_pts)
    ok = pos < len(ts)
    pos = pos[ok]
    pos = pos[ts[pos] == key_pts[ok]]
    return np.unique(np.concatenate([np.zeros(1, dtype=np.int64), pos.astype(np.int64)]))


def scan_packets(path: Path, *, scan: PacketScan | None = None, cancel: Cancel = None,
                 progress: Progress = None) -> PacketScan:
    """Read every packet of the video stream without decoding (OpenCV raw-packet mode)."""
    scan = scan if scan is not None else PacketScan()
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG, [cv2.CAP_PROP_FORMAT, -1])
    try:
        if not cap.isOpened():
            raise MediaError(f"{path}: not a video OpenCV can open (unknown container or codec)")
        total = max(int(cap.get(cv2.CAP_PROP_FRAME_COUNT) or 0), 1)
        get = cap.get
        while cap.grab():
            scan.add(round(get(cv2.CAP_PROP_POS_MSEC), _TS_DECIMALS),
                     bool(get(cv2.CAP_PROP_LRF_HAS_KEY_FRAME)))
            n = len(scan.pts)
            if n % 512 == 0:
                check_cancel(cancel, f"{path}: frame index")
                report(progress, n, max(total, n + 1))
                scan.publish()
    finally:
        cap.release()
        scan.done = True
        scan.publish()
    if len(set(scan.pts)) != len(scan.pts) and scan.problem is None:
        scan.problem = "packets without distinct timestamps"
    return scan


def decoded_head(path: Path, count: int = HEAD_FRAMES) -> list[float]:
    """Timestamps of the first ``count`` frames a decoder yields (rounded ms)."""
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG)
    out: list[float] = []
    try:
        while len(out) < count and cap.grab():
            out.append(round(cap.get(cv2.CAP_PROP_POS_MSEC), _TS_DECIMALS))
    finally:
        cap.release()
    return out


def head_problem(head: list[float], ts: np.ndarray) -> str | None:
    """Why the decoder's first frames disagree with the packet index, or None."""
    n = min(len(head), len(ts))
    if n == 0 or head[:n] != np.round(ts[:n], _TS_DECIMALS).tolist():
        return "the decoder's first frames do not match the packets"
    return None


# -- building ----------------------------------------------------------------------------------
def index_from_scan(scan: PacketScan) -> FrameIndex:
    ts, keys = scan.settled()
    return FrameIndex(timestamps_ms=ts, keyframes=keys, method="packets")


def decode_index(path: Path, *, cancel: Cancel = None, progress: Progress = None,
                 note: str = "") -> FrameIndex:
    """The index from one sequential decode pass (``grab()`` without colour conversion)."""
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG)
    stamps: list[float] = []
    itypes: list[int] = []
    try:
        if not cap.isOpened():
            raise MediaError(f"{path}: not a video OpenCV can open (unknown container or codec)")
        total = max(int(cap.get(cv2.CAP_PROP_FRAME_COUNT) or 0), 1)
        while cap.grab():
            n = len(stamps)
            stamps.append(cap.get(cv2.CAP_PROP_POS_MSEC))
            if int(cap.get(cv2.CAP_PROP_FRAME_TYPE)) == ord("I"):
                itypes.append(n)
            if n % 32 == 0:
                check_cancel(cancel, f"{path}: frame index")
                report(progress, n, max(total, n + 1))
    finally:
        cap.release()
    if not stamps:
        raise MediaError(f"{path}: no decodable frame (truncated or unsupported codec)")
    ts = np.asarray(stamps, dtype=np.float64)
    scan = scan_packets(path, cancel=cancel)  # keyframe flags come from the packets
    keys = _key_numbers(np.round(ts, _TS_DECIMALS), np.asarray(scan.keys, dtype=np.float64))
    if len(keys) <= 1 and itypes:
        keys = np.unique(np.asarray([0, *itypes], dtype=np.int64))
    report(progress, len(stamps), len(stamps))
    return FrameIndex(timestamps_ms=ts, keyframes=keys, method="decode", note=note)


def build_frame_index(path: str | os.PathLike, *, cancel: Cancel = None,
                      progress: Progress = None, method: str = "auto",
                      scan: PacketScan | None = None,
                      on_trusted: Callable[[PacketScan | None], None] | None = None) -> FrameIndex:
    """Build the frame index of a file: from its packets where that is exact, else by decoding.

    Parameters
    ----------
    path : path-like
        The video file.
    cancel : threading.Event or callable, optional
        Checked every few hundred packets or frames; raises
        :class:`~clipscribe.media.JobCancelled` when set.
    progress : callable, optional
        ``progress(done, total)`` where ``total`` is the header's frame count (an estimate).
    method : {"auto", "decode"}
        ``"decode"`` forces the decode pass (for checks and benchmarks).
    scan : PacketScan, optional
        Filled while the packet pass runs, so another thread can use the frames read so far.
    on_trusted : callable, optional
        Called with ``scan`` once the checks that can be made before the pass (edit list,
        decoded first frames) have passed, or with None when the decode pass is chosen first.

    Returns
    -------
    FrameIndex
        ``frame_count`` equals the number of frames a ``read()`` loop yields.
    """
    p = Path(path)
    if method not in ("auto", "decode"):
        raise ValueError(f"method must be 'auto' or 'decode', got {method!r}")
    if method == "decode":
        return decode_index(p, cancel=cancel, progress=progress, note="asked for")
    problem = edit_list_problem(p)
    if problem is not None:
        if on_trusted is not None:
            on_trusted(None)
        return decode_index(p, cancel=cancel, progress=progress, note=problem)
    head = decoded_head(p)
    if not head:
        raise MediaError(f"{p}: no decodable frame (truncated or unsupported codec)")
    scan = scan if scan is not None else PacketScan()
    scan.head = head
    if on_trusted is not None:
        on_trusted(scan)
    scan_packets(p, scan=scan, cancel=cancel, progress=progress)
    index = index_from_scan(scan)
    problem = scan.problem or head_problem(head, index.timestamps_ms)
    if problem is not None:
        return decode_index(p, cancel=cancel, progress=progress, note=problem)
    report(progress, index.frame_count, index.frame_count)
    return index


def index_key(path: str | os.PathLike, *, sample: int = 1 << 20) -> str:
    """A cheap content key for the index cache: SHA-256 of the size, the first and the last MiB.

    Reading the whole of an hour-long file to look its index up would cost more than building
    the index; a file changed in the middle without changing size, start or end is not expected
    of video files (a re-encode or a cut changes all three).
    """
    h = hashlib.sha256(b"clipscribe-index-key-1")
    with open(path, "rb") as f:
        size = os.fstat(f.fileno()).st_size
        h.update(str(size).encode())
        h.update(f.read(sample))
        if size > sample:
            f.seek(max(sample, size - sample))
            h.update(f.read(sample))
    return "q" + h.hexdigest()


def cached_index(key: str, index_dir: Path | None = None) -> FrameIndex | None:
    """The cached index stored under ``key``, or None (absent, damaged or older version)."""
    folder = Path(index_dir) if index_dir is not None else default_index_dir()
    target = folder / f"{key}.npz"
    if target.is_file():
        try:
            return FrameIndex.from_bytes(target.read_bytes())
        except Exception:  # noqa: BLE001 - a damaged or foreign cache file is rebuilt
            return None
    return None


def store_index(key: str, index: FrameIndex, index_dir: Path | None = None) -> None:
    folder = Path(index_dir) if index_dir is not None else default_index_dir()
    try:
        atomic_write_bytes(folder / f"{key}.npz", index.to_bytes())
    except OSError:
        pass  # a read-only cache folder costs speed, not correctness


def load_or_build_index(path: str | os.PathLike, sha256: str | None = None, *,
                        index_dir: Path | None = None, cancel: Cancel = None,
                        progress: Progress = None, **build) -> FrameIndex:
    """Return the cached index of this file, building and caching it when absent.

    The cache is keyed by :func:`index_key` (``sha256``, accepted for older callers, is not
    needed).
    """
    key = index_key(path)
    index = cached_index(key, index_dir)
    if index is None:
        index = build_frame_index(path, cancel=cancel, progress=progress, **build)
        store_index(key, index, index_dir)
    return index
