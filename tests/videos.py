"""Small generated videos for tests (plain functions; tests/conftest.py offers them as fixtures).
The frame-exact media tests make their own files with FFmpeg (tests/media/clips.py)."""

from __future__ import annotations

from pathlib import Path

import cv2
import numpy as np


def write_video(path: Path, n: int = 12, size: tuple[int, int] = (64, 48), seed: int = 0, *,
                codec: str = "mp4v", fps: float = 10.0, noise: bool = False) -> Path:
    """``n`` frames at ``path``: flat grey steps with a corner patch set by ``seed``, or with
    ``noise`` every pixel random (from ``seed``), so that files with different seeds differ."""
    path.parent.mkdir(parents=True, exist_ok=True)
    out = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*codec), fps, size)
    rng = np.random.default_rng(seed)
    for i in range(n):
        if noise:
            img = rng.integers(0, 255, (size[1], size[0], 3), dtype=np.uint8)
        else:
            img = np.full((size[1], size[0], 3), (i * 20) % 255, np.uint8)
            img[:8, :8] = rng.integers(0, 255, 3)
        out.write(img)
    out.release()
    return path


def moving_square(path: Path, frames: int = 240, size: tuple[int, int] = (640, 480)) -> Path:
    """A square moving right with the frame number drawn on it: enough decoding and optical
    flow to keep background jobs busy."""
    out = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*"mp4v"), 25, size)
    for i in range(frames):
        img = np.full((size[1], size[0], 3), 90, np.uint8)
        x = 20 + (i * 5) % (size[0] - 120)
        cv2.rectangle(img, (x, 150), (x + 100, 250), (40, 200, 240), -1)
        cv2.putText(img, str(i), (20, 60), cv2.FONT_HERSHEY_SIMPLEX, 2, (255, 255, 255), 3)
        out.write(img)
    out.release()
    return path
