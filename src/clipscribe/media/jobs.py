"""Background media jobs: thumbnail strips and motion curves, cancelable, with progress and a
result cache keyed by the file's SHA-256 and the job's parameters.

Each job is a plain blocking function; run it on a worker thread and pass ``cancel`` (a
``threading.Event`` or a callable returning True) to stop it, which raises :class:`JobCancelled`.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
from collections.abc import Callable
from pathlib import Path

import cv2
import numpy as np

from ._common import (Cancel, Progress, atomic_write_bytes, check_cancel, check_media_path,
                      default_cache_dir, report)
from .errors import MediaError
from .probe import file_sha256
from .video import Video, open_video

JOB_CACHE_VERSION = 1


def default_job_cache_dir() -> Path:
    """``platformdirs.user_cache_dir("clipscribe")/jobs``."""
    return default_cache_dir() / "jobs"


def cached_result(path: Path, name: str, params: dict, compute: Callable[[], np.ndarray], *,
                  cache_dir: str | os.PathLike | None, use_cache: bool) -> np.ndarray:
    """Load ``<sha256>-<name>-<params hash>.npy`` from the cache or compute and store it."""
    if not use_cache:
        return compute()
    folder = Path(cache_dir) if cache_dir is not None else default_job_cache_dir()
    recipe = json.dumps({"v": JOB_CACHE_VERSION, **params}, sort_keys=True)
    key = f"{file_sha256(path)}-{name}-{hashlib.sha256(recipe.encode()).hexdigest()[:16]}.npy"
    target = folder / key
    if target.is_file():
        try:
            return np.load(target, allow_pickle=False)
        except (OSError, ValueError):
            pass  # damaged cache file: compute again
    result = compute()
    buf = io.BytesIO()
    np.save(buf, result, allow_pickle=False)
    try:
        atomic_write_bytes(target, buf.getvalue())
    except OSError:
        pass
    return result


def sample_indices(frame_count: int, n: int) -> np.ndarray:
    """Frame numbers at the centres of ``n`` equal parts of the clip: ``floor((j + 0.5) * N / n)``."""
    if n <= 0:
        raise ValueError(f"number of samples must be positive, got {n}")
    j = np.arange(n, dtype=np.float64)
    return np.minimum(((j + 0.5) * frame_count / n).astype(np.int64), frame_count - 1)


def wait_for_index(video: Video, cancel: Cancel) -> int:
    """Wait for the video's frame index, checking ``cancel``; return the true frame count."""
    while not video.wait_index(0.05):
        check_cancel(cancel, f"{video.path}: waiting for the frame index")
        if video._index_done.is_set():  # noqa: SLF001 - finished without an index: cancelled
            raise MediaError(f"{video.path}: frame index could not be built")
    return video.frame_count


def thumbnail_strip(path: str | os.PathLike, n: int, *, height: int = 72, cancel: Cancel = None,
                    progress: Progress = None, cache_dir: str | os.PathLike | None = None,
                    use_cache: bool = True,
                    index_cache_dir: str | os.PathLike | None = None) -> list[np.ndarray]:
    """``n`` evenly spaced frames scaled to ``height`` pixels (aspect kept), for a scrub bar.

    Frames are taken at :func:`sample_indices` and are the exact decode-order frames;
    scaling uses ``cv2.INTER_AREA``. Returns a list of uint8 BGR arrays ``(height, w, 3)``.
    """
    p = check_media_path(path)
    if height < 1:
        raise ValueError(f"thumbnail height must be >= 1, got {height}")

    def compute() -> np.ndarray:
        with open_video(p, cache_bytes=0, index_cache_dir=index_cache_dir) as v:
            count = wait_for_index(v, cancel)
            w, h = v.size
            tw = max(1, round(w * height / h))
            out = np.empty((n, height, tw, 3), dtype=np.uint8)
            for j, i in enumerate(sample_indices(count, n).tolist()):
                check_cancel(cancel, f"{p}: thumbnails")
                out[j] = cv2.resize(v.frame(i), (tw, height), interpolation=cv2.INTER_AREA)
                report(progress, j + 1, n)
            return out

    return list(cached_result(p, "thumbs", {"n": n, "height": height}, compute,
                              cache_dir=cache_dir, use_cache=use_cache))


def _small_grey(frame: np.ndarray, scale: float) -> np.ndarray:
    grey = cv2.cvtColor(frame, cv2.COLOR_BGR2GRAY)
    h, w = grey.shape
    size = (max(16, round(w * scale)), max(16, round(h * scale)))
    return cv2.resize(grey, size, interpolation=cv2.INTER_AREA)


def motion_curve(path: str | os.PathLike, *, method: str = "flow", scale: float = 0.25,
                 cancel: Cancel = None, progress: Progress = None,
                 cache_dir: str | os.PathLike | None = None,
                 use_cache: bool = True) -> np.ndarray:
    """Amount of motion per frame, one float32 per frame in decode order (frame 0 is 0).

    ``method="flow"``: mean magnitude of dense optical flow (Farnebäck 2003, "Two-Frame Motion
    Estimation Based on Polynomial Expansion", SCIA, via ``cv2.calcOpticalFlowFarneback``)
    between frame ``t-1`` and ``t`` on grey frames downscaled by ``scale``, divided by ``scale``
    so the value is in full-resolution pixels per frame:
    ``m_t = mean(sqrt(u^2 + v^2)) / scale``.

    ``method="diff"`` (fast): mean absolute grey-level difference of the downscaled frames,
    ``m_t = mean(|g_t - g_{t-1}|)``, in grey levels (0..255).
    """
    p = check_media_path(path)
    if method not in ("flow", "diff"):
        raise ValueError(f"method must be 'flow' or 'diff', got {method!r}")
    if not 0 < scale <= 1:
        raise ValueError(f"scale must be in (0, 1], got {scale}")

    def compute() -> np.ndarray:
        cap = cv2.VideoCapture(str(p), cv2.CAP_FFMPEG)
        try:
            if not cap.isOpened():
                raise MediaError(f"{p}: not a video OpenCV can open")
            total = max(int(cap.get(cv2.CAP_PROP_FRAME_COUNT) or 0), 1)
            values: list[float] = []
            prev = None
            while True:
                ok, frame = cap.read()
                if not ok:
                    break
                cur = _small_grey(frame, scale)
                if prev is None:
                    values.append(0.0)
                elif method == "flow":
                    # Parameters: pyramid scale 0.5, 3 levels, window 15, 3 iterations,
                    # poly_n 5, poly_sigma 1.2 (common practice, the values OpenCV's docs use).
                    flow = cv2.calcOpticalFlowFarneback(prev, cur, None, 0.5, 3, 15, 3, 5, 1.2, 0)
                    mag = cv2.magnitude(flow[..., 0], flow[..., 1])
                    values.append(float(mag.mean()) / scale)
                else:
                    values.append(float(cv2.absdiff(cur, prev).mean()))
                prev = cur
                n = len(values)
                if n % 8 == 0:
                    check_cancel(cancel, f"{p}: motion curve")
                    report(progress, n, max(total, n))
            if not values:
                raise MediaError(f"{p}: no decodable frame")
            report(progress, len(values), len(values))
            return np.asarray(values, dtype=np.float32)
        finally:
            cap.release()

    return cached_result(p, "motion", {"method": method, "scale": scale}, compute,
                         cache_dir=cache_dir, use_cache=use_cache)
