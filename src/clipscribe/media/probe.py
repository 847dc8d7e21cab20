"""Cheap facts about a media file: header probe and content hash. No Qt, no database."""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass

import cv2

from ._common import check_media_path
from .errors import MediaError

VIDEO_SUFFIXES = frozenset({".mp4", ".mov", ".mkv", ".avi", ".webm", ".m4v"})


@dataclass(frozen=True, slots=True)
class ProbeInfo:
    """What the container header says, checked by decoding the first frame.

    ``frame_count`` is the header's figure (often wrong on variable-frame-rate files); the frame
    index built by :mod:`clipscribe.media.index` has the true count.
    """

    fps: float
    frame_count: int
    width: int
    height: int

    @property
    def duration(self) -> float:
        return self.frame_count / self.fps if self.fps > 0 else 0.0


def file_sha256(path: str | os.PathLike, *, chunk: int = 1 << 20) -> str:
    """Stream the file through SHA-256 (constant memory)."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        while block := f.read(chunk):
            h.update(block)
    return h.hexdigest()


def probe(path: str | os.PathLike) -> ProbeInfo:
    """Open the file, read its header and decode one frame; raise MediaError if that fails."""
    p = check_media_path(path)
    cap = cv2.VideoCapture(str(p), cv2.CAP_FFMPEG)
    try:
        if not cap.isOpened():
            raise MediaError(f"{p}: not a video OpenCV can open (unknown container or codec)")
        ok, frame = cap.read()
        if not ok or frame is None:
            raise MediaError(f"{p}: no decodable frame (truncated or unsupported codec)")
        fps = float(cap.get(cv2.CAP_PROP_FPS) or 0.0)
        n = int(cap.get(cv2.CAP_PROP_FRAME_COUNT) or 0)
        h, w = frame.shape[:2]
        return ProbeInfo(fps=fps if fps > 0 else 25.0, frame_count=max(n, 1), width=w, height=h)
    finally:
        cap.release()
