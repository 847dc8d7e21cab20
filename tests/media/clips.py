"""Test clips made on the fly: every frame carries its own number as 12 big black/white blocks.

The blocks (6 columns x 2 rows across the top third) survive lossy compression, so a test can read
the number back from decoded pixels and know which frame it is looking at.
"""

from __future__ import annotations

import hashlib
import shutil
import subprocess
from pathlib import Path

import cv2
import numpy as np

CODE_BITS = 12
_COLS, _ROWS = 6, 2


def _block(w: int, h: int, bit: int) -> tuple[int, int, int, int]:
    bw, bh = w // _COLS, h // (3 * _ROWS)
    r, c = divmod(bit, _COLS)
    return c * bw, r * bh, bw, bh


def make_frame(i: int, w: int, h: int, seed: int = 0, code: bool = True) -> np.ndarray:
    """A BGR frame: code blocks for ``i`` on top (unless ``code`` is False), a seeded moving
    pattern below."""
    rng = np.random.default_rng(seed)
    base = rng.integers(0, 256, size=(4, 6, 3), dtype=np.uint8)
    pattern = cv2.resize(base, (w * 2, h), interpolation=cv2.INTER_CUBIC)
    shift = (i * 3) % w
    img = np.ascontiguousarray(pattern[:, shift:shift + w])
    cx = int((w / 2) + (w / 3) * np.sin(i / 7 + seed))
    cv2.circle(img, (cx, int(h * 0.7)), max(h // 8, 3), (255, 255, 255), -1)
    for bit in range(CODE_BITS if code else 0):
        x, y, bw, bh = _block(w, h, bit)
        img[y:y + bh, x:x + bw] = 255 if (i >> bit) & 1 else 0
    return img


def read_code(frame: np.ndarray) -> int:
    """The frame number written by :func:`make_frame`, read back from decoded pixels."""
    h, w = frame.shape[:2]
    grey = cv2.cvtColor(frame, cv2.COLOR_BGR2GRAY)
    value = 0
    for bit in range(CODE_BITS):
        x, y, bw, bh = _block(w, h, bit)
        core = grey[y + bh // 4:y + bh - bh // 4, x + bw // 4:x + bw - bw // 4]
        if core.mean() > 127:
            value |= 1 << bit
    return value


def write_opencv(path: Path, fourcc: str, n: int, w: int, h: int, fps: float = 30.0,
                 seed: int = 0) -> Path:
    out = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*fourcc), fps, (w, h))
    assert out.isOpened(), f"OpenCV cannot write {fourcc} to {path}"
    for i in range(n):
        out.write(make_frame(i, w, h, seed))
    out.release()
    return path


def have_ffmpeg() -> bool:
    return shutil.which("ffmpeg") is not None


def write_ffmpeg(path: Path, n: int, w: int, h: int, codec_args: list[str], *, fps: int = 30,
                 filters: str | None = None, seed: int = 0, extra: list[str] = (),
                 code: bool = True) -> Path:
    """Pipe raw BGR frames into ffmpeg and encode with ``codec_args``."""
    cmd = ["ffmpeg", "-hide_banner", "-loglevel", "error", "-y", "-f", "rawvideo",
           "-pix_fmt", "bgr24", "-s", f"{w}x{h}", "-r", str(fps), "-i", "-"]
    if filters:
        cmd += ["-vf", filters]
    cmd += [*codec_args, *extra, str(path)]
    data = b"".join(make_frame(i, w, h, seed, code).tobytes() for i in range(n))
    subprocess.run(cmd, input=data, check=True, timeout=120)
    return path


def _read_loop(path: Path):
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG)
    try:
        while True:
            ok, f = cap.read()
            if not ok:
                return
            yield f
    finally:
        cap.release()


def sequential_frames(path: Path) -> list[np.ndarray]:
    """Reference decode: a plain ``read()`` loop on a fresh capture."""
    return list(_read_loop(path))


def write_ffmpeg_streamed(path: Path, n: int, w: int, h: int, codec_args: list[str], *,
                          fps: int = 30, filters: str | None = None, extra: list[str] = (),
                          seed: int = 0) -> Path:
    """Like :func:`write_ffmpeg`, but frames are piped one by one (long clips stay out of memory)."""
    cmd = ["ffmpeg", "-hide_banner", "-loglevel", "error", "-y", "-f", "rawvideo",
           "-pix_fmt", "bgr24", "-s", f"{w}x{h}", "-r", str(fps), "-i", "-"]
    if filters:
        cmd += ["-vf", filters]
    cmd += [*codec_args, *extra, str(path)]
    proc = subprocess.Popen(cmd, stdin=subprocess.PIPE)
    try:
        for i in range(n):
            proc.stdin.write(make_frame(i, w, h, seed).tobytes())
    finally:
        proc.stdin.close()
        proc.wait(timeout=300)
    if proc.returncode != 0:
        raise RuntimeError(f"ffmpeg failed ({proc.returncode}) making {path}")
    return path


def frame_digests(path: Path) -> list[bytes]:
    """Reference decode of a long clip, kept small: a digest per frame of a ``read()`` loop."""
    return [digest(f) for f in _read_loop(path)]


def digest(frame: np.ndarray) -> bytes:
    return hashlib.blake2b(frame.tobytes(), digest_size=16).digest()
