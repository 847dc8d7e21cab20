"""Invented test videos whose motion and colour are known: a random texture of one hue sliding
by a fixed (dx, dy) pixels per frame."""

from __future__ import annotations

from pathlib import Path

import cv2
import numpy as np

#: hue (OpenCV's 0..180) of each colour used by the tests
HUES = {"red": 0, "green": 60, "blue": 115}


def texture(h: int, w: int, seed: int) -> np.ndarray:
    """A smooth random grey texture, uint8, with detail at every scale the flow needs."""
    rng = np.random.default_rng(seed)
    img = cv2.resize(rng.random((h // 4, w // 4)).astype(np.float32), (w, h),
                     interpolation=cv2.INTER_CUBIC)
    img = cv2.GaussianBlur(img, (0, 0), 1.2)
    img = (img - img.min()) / max(float(img.max() - img.min()), 1e-6)
    return (img * 255).astype(np.uint8)


def shifted(img: np.ndarray, dx: float, dy: float) -> np.ndarray:
    """``img`` moved by (dx, dy) pixels (bilinear, edges mirrored)."""
    m = np.float32([[1, 0, dx], [0, 1, dy]])
    return cv2.warpAffine(img, m, (img.shape[1], img.shape[0]), flags=cv2.INTER_LINEAR,
                          borderMode=cv2.BORDER_REFLECT)


def sliding_clip(path: Path, *, dx: int, dy: int, colour: str = "red", frames: int = 24,
                 size: tuple[int, int] = (96, 64), seed: int = 0, fps: float = 12.0) -> Path:
    """A clip of ``frames`` frames in which a ``colour`` texture moves (dx, dy) px per frame.

    The picture is a window of a larger texture whose offset advances by (dx, dy) per frame,
    so content enters at one edge, as with a moving camera. Written as MJPEG at high quality.
    """
    w, h = size
    pad = 4 + max(abs(dx), abs(dy)) * frames
    tex = texture(h + 2 * pad, w + 2 * pad, seed)
    hsv = np.empty((*tex.shape, 3), np.uint8)
    hsv[..., 0] = HUES[colour]
    hsv[..., 1] = 170
    hsv[..., 2] = 40 + (tex.astype(np.float32) * 0.8).astype(np.uint8)
    bgr = cv2.cvtColor(hsv, cv2.COLOR_HSV2BGR)
    path.parent.mkdir(parents=True, exist_ok=True)
    out = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*"MJPG"), fps, size)
    out.set(cv2.VIDEOWRITER_PROP_QUALITY, 95)
    for i in range(frames):
        # content moves by +dx: the window moves by -dx over the texture
        x0, y0 = pad - dx * i, pad - dy * i
        out.write(np.ascontiguousarray(bgr[y0:y0 + h, x0:x0 + w]))
    out.release()
    return path
