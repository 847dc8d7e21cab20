"""Reaching a frame by decoding only the pictures it depends on (H.264).

A seek decodes every frame from the keyframe before the target. In H.264 a picture whose slices
carry ``nal_ref_idc == 0`` is, by the standard's definition, used by no other picture, so a
decoder that is never given it decodes every other picture to the same pixels. Before the target
about two frames in five of a typical stream with B-frames are such pictures (and half of them
decode slower than their share of bytes suggests), so leaving them out shortens the way to the
target; and the decoder starts at the keyframe itself, where OpenCV's seek starts 16 frames
earlier and so, for a target just after a keyframe, a whole keyframe interval earlier.

How: a demux-only capture (OpenCV's raw-packet mode, which hands out H.264 in Annex B form) is
moved to the keyframe; :class:`PacketFeed` passes its packets on as a byte stream, leaving out
unreferenced pictures shown before the target, to a second, decoding ``cv2.VideoCapture`` opened
on that stream. The decoder yields the pictures it was given in presentation order, so the n-th
frame it yields is the one with the n-th smallest timestamp among the packets passed on. From the
target on, every packet is passed on, so the same decoder then steps forward frame by frame.

Used only where it is exact: H.264, a keyframe that is an IDR picture with its parameter sets,
and a file on which :func:`sparse_matches` found the result equal to a plain sequential decode.
"""

from __future__ import annotations

import heapq
import io
import os
from pathlib import Path

import cv2
import numpy as np

from .index import FrameIndex

_H264_TAGS = frozenset({b"h264", b"H264", b"avc1", b"AVC1", b"avc3", b"x264", b"X264"})
_TS_DECIMALS = 3  # as in the frame index
#: Frames checked by :func:`sparse_matches`: the target is frame CHECK_AT (or the last frame).
CHECK_AT = 24
CHECK_AFTER = 4


def nal_facts(packet: bytes) -> tuple[bool, bool, frozenset[int]]:
    """(whether some slice of this Annex B packet is referenced, whether it holds an IDR slice,
    the NAL unit types present)."""
    ref = idr = False
    kinds = set()
    at = packet.find(b"\x00\x00\x01")
    while 0 <= at < len(packet) - 3:
        head = packet[at + 3]
        kind = head & 0x1F
        kinds.add(kind)
        if 1 <= kind <= 5:
            ref = ref or (head >> 5) & 3 != 0
            idr = idr or kind == 5
        at = packet.find(b"\x00\x00\x01", at + 4)
    return ref, idr, frozenset(kinds)


class PacketFeed(io.BufferedIOBase):
    """The packets of a demux-only capture as one byte stream, without the unreferenced pictures
    shown before ``keep_from_ms``; remembers the timestamps of the pictures it passed on."""

    def __init__(self, raw: cv2.VideoCapture, keep_from_ms: float) -> None:
        super().__init__()
        self._raw = raw
        self._keep_from = keep_from_ms
        self._buf = bytearray()
        self._eof = False
        self._waiting: list[float] = []  # heap of timestamps passed on and not yet yielded
        self.passed = 0
        self.left_out = 0

    def readable(self) -> bool:
        return True

    def seekable(self) -> bool:
        return False

    def seek(self, offset: int, whence: int = 0) -> int:
        return -1  # a stream: no size, no going back

    def tell(self) -> int:
        return -1

    def read(self, size: int | None = -1) -> bytes:
        want = 1 << 20 if size is None or size < 0 else size
        raw = self._raw
        while len(self._buf) < want and not self._eof:
            if not raw.grab():
                self._eof = True
                break
            pts = round(raw.get(cv2.CAP_PROP_POS_MSEC), _TS_DECIMALS)
            ok, data = raw.retrieve()
            if not ok or data is None:
                self._eof = True
                break
            packet = data.tobytes()
            if pts < self._keep_from and not nal_facts(packet)[0]:
                self.left_out += 1
                continue
            self._buf += packet
            heapq.heappush(self._waiting, pts)
            self.passed += 1
        out = bytes(self._buf[:want])
        del self._buf[:want]
        return out

    def next_yielded(self) -> float | None:
        """Timestamp of the frame the decoder yields next (call once per frame it yields)."""
        return heapq.heappop(self._waiting) if self._waiting else None


class SparseCapture:
    """A decoder positioned on one frame, reached from its keyframe through referenced pictures
    only. ``grab()`` and ``retrieve()`` then behave as a ``cv2.VideoCapture`` that has just
    yielded that frame (grabbed, not yet retrieved) and goes on frame by frame."""

    def __init__(self, raw: cv2.VideoCapture, feed: PacketFeed, cap: cv2.VideoCapture) -> None:
        # The decoder reads from the feed without holding a reference to it: keep the feed, and
        # let the decoder go first (attributes are dropped in the order they were set).
        self._cap = cap
        self._raw = raw
        self._feed = feed

    @classmethod
    def open_at(cls, path: Path, index: FrameIndex, i: int, threads: int | None = None, *,
                raw: cv2.VideoCapture | None = None) -> SparseCapture | None:
        """Position a decoder on frame ``i`` of ``path``; None when this file or keyframe does not
        allow it (the caller then seeks the usual way).

        ``raw``: the demux-only capture of this file from a previous one (see
        :meth:`take_demuxer`), spared opening the file again; released on failure.
        """
        key = index.keyframe_at_or_before(i)
        if raw is None:
            raw = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG, [cv2.CAP_PROP_FORMAT, -1])
        if not raw.isOpened():
            raw.release()
            return None
        sparse = None
        try:
            sparse = cls._start(raw, index, key, i, threads)
        finally:
            if sparse is None:
                raw.release()
        return sparse

    @classmethod
    def _start(cls, raw: cv2.VideoCapture, index: FrameIndex, key: int, i: int,
               threads: int | None) -> SparseCapture | None:
        tag = int(raw.get(cv2.CAP_PROP_FOURCC)).to_bytes(4, "little")
        fps = raw.get(cv2.CAP_PROP_FPS)
        if tag not in _H264_TAGS or fps <= 0:
            return None
        ts = np.round(index.timestamps_ms, _TS_DECIMALS)
        # Raw-packet mode seeks the demuxer to the keyframe at or before a frame number
        # (presentation time x nominal rate); read on to the keyframe's own packet.
        raw.set(cv2.CAP_PROP_POS_FRAMES, index.opencv_number(key, fps))
        for _ in range(8):
            if not raw.grab():
                return None
            pts = round(raw.get(cv2.CAP_PROP_POS_MSEC), _TS_DECIMALS)
            if pts == ts[key]:
                break
        else:
            return None
        ok, data = raw.retrieve()
        if not ok or data is None:
            return None
        first = data.tobytes()
        ref, idr, kinds = nal_facts(first)
        if not (idr and ref and {7, 8} <= kinds):
            return None  # not an IDR picture with its parameter sets: later pictures may
            # refer to pictures before it
        feed = PacketFeed(raw, float(ts[i]))
        feed._buf += first
        heapq.heappush(feed._waiting, float(ts[key]))
        feed.passed = 1
        params = [] if threads is None else [cv2.CAP_PROP_N_THREADS, int(threads)]
        try:
            cap = cv2.VideoCapture(feed, cv2.CAP_FFMPEG, params)  # type: ignore[call-overload]
        except (cv2.error, TypeError):  # an OpenCV that cannot read from a Python stream
            return None
        if not cap.isOpened():
            cap.release()
            return None
        sparse = cls(raw, feed, cap)
        while True:
            if not cap.grab():
                break
            got = feed.next_yielded()
            if got == ts[i]:
                return sparse
            if got is None or got > ts[i]:
                break
        cap.release()
        return None

    def grab(self) -> bool:
        if not self._cap.grab():
            return False
        self._feed.next_yielded()
        return True

    def retrieve(self, image: np.ndarray | None = None) -> tuple[bool, np.ndarray | None]:
        return self._cap.retrieve() if image is None else self._cap.retrieve(image)

    @property
    def left_out(self) -> int:
        """Pictures the decoder was spared so far."""
        return self._feed.left_out

    def release(self) -> None:
        self._cap.release()
        self._raw.release()

    def take_demuxer(self) -> cv2.VideoCapture:
        """Stop decoding and hand over the demux-only capture (for the next ``open_at``)."""
        self._cap.release()
        return self._raw


def sparse_matches(path: str | os.PathLike, index: FrameIndex) -> bool:
    """Whether frames reached by :class:`SparseCapture` equal a plain sequential decode here.

    Checks frames ``CHECK_AT`` .. ``CHECK_AT + CHECK_AFTER`` (fewer on a short file), reached
    with the unreferenced pictures before them left out, against a fresh ``read()`` loop.
    """
    n = index.frame_count
    target = min(CHECK_AT, n - 1)
    stop = min(target + CHECK_AFTER + 1, n)
    sparse = SparseCapture.open_at(Path(path), index, target)
    if sparse is None:
        return False
    plain = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG)
    try:
        for j in range(stop):  # frame by frame, holding two frames at a time
            if j < target:
                if not plain.grab():
                    return False
                continue
            ok, expected = plain.read()
            if not ok:
                return False
            if j > target and not sparse.grab():
                return False
            ok, got = sparse.retrieve()
            if not ok or got is None or not np.array_equal(got, expected):
                return False
        return True
    finally:
        plain.release()
        sparse.release()
