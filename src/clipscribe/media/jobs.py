"""Background media jobs: thumbnail strips and motion curves, cancelable, with progress and a
result cache keyed by the file's SHA-256 and the job's parameters.

Each job is a plain blocking function; run it on a worker thread and pass ``cancel`` (a
``threading.Event`` or a callable returning True) to stop it, which raises :class:`JobCancelled`.
``background=True`` makes the job give way to the viewer: the worker thread's priority is
lowered and its decoder uses one thread.

Results are cached per user and, given ``shared_cache_dir`` (the project's
:func:`shared_cache_dir` beside its media), in a folder every user of the project reads, so a
clip's thumbnails and motion curve are computed once per project rather than once per person.
The file names hold the content hash, so a shared result never belongs to another file.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
import threading
from collections.abc import Callable
from pathlib import Path

import cv2
import numpy as np

from ._common import (Cancel, Progress, atomic_write_bytes, check_cancel, check_media_path,
                      default_cache_dir, lower_thread_priority, report)
from .errors import MediaError
from .probe import file_sha256
from .video import Video, open_video

JOB_CACHE_VERSION = 1
#: name of the project's shared result folder inside its media root (hidden, holds no videos)
SHARED_CACHE_FOLDER = ".clipscribe-cache"
#: one decoder thread for background jobs, leaving the other cores to the viewer
BACKGROUND_DECODER_THREADS = 1


def default_job_cache_dir() -> Path:
    """``platformdirs.user_cache_dir("clipscribe")/jobs``."""
    return default_cache_dir() / "jobs"


def shared_cache_dir(media_root: str | os.PathLike) -> Path:
    """The result folder a project's users share: ``<media root>/.clipscribe-cache``."""
    return Path(media_root) / SHARED_CACHE_FOLDER


_hashes: dict[tuple[str, int, int], str] = {}
_hashes_lock = threading.Lock()


def content_sha256(path: Path) -> str:
    """:func:`file_sha256`, remembered in this process while the file's size and time stay."""
    st = os.stat(path)
    key = (os.path.realpath(path), st.st_size, st.st_mtime_ns)
    with _hashes_lock:
        known = _hashes.get(key)
    if known is None:
        known = file_sha256(path)
        with _hashes_lock:
            _hashes[key] = known
    return known


def _load(target: Path) -> np.ndarray | None:
    if target.is_file():
        try:
            return np.load(target, allow_pickle=False)
        except (OSError, ValueError):
            pass  # damaged cache file: compute again
    return None


def _store(targets: list[Path], data: bytes) -> None:
    for target in targets:  # the first folder that takes it (the shared one may be read-only)
        try:
            atomic_write_bytes(target, data)
            return
        except OSError:
            continue


def cached_result(path: Path, name: str, params: dict, compute: Callable[[], np.ndarray], *,
                  cache_dir: str | os.PathLike | None, use_cache: bool,
                  shared_dir: str | os.PathLike | None = None) -> np.ndarray:
    """Load ``<sha256>-<name>-<params hash>.npy`` from the shared folder (when given) or the
    personal cache, or compute it and store it in the first of them that can be written."""
    if not use_cache:
        return compute()
    folder = Path(cache_dir) if cache_dir is not None else default_job_cache_dir()
    recipe = json.dumps({"v": JOB_CACHE_VERSION, **params}, sort_keys=True)
    key = f"{content_sha256(path)}-{name}-{hashlib.sha256(recipe.encode()).hexdigest()[:16]}.npy"
    targets = ([Path(shared_dir) / key] if shared_dir is not None else []) + [folder / key]
    for k, target in enumerate(targets):
        found = _load(target)
        if found is not None:
            if k > 0:  # computed before the project shared its results: share it now
                _store(targets[:1], target.read_bytes())
            return found
    result = compute()
    buf = io.BytesIO()
    np.save(buf, result, allow_pickle=False)
    _store(targets, buf.getvalue())
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
        if video.index_finished:  # finished without an index: cancelled
            raise MediaError(f"{video.path}: frame index could not be built")
    return video.frame_count


def thumbnail_strip(path: str | os.PathLike, n: int, *, height: int = 72, cancel: Cancel = None,
                    progress: Progress = None, cache_dir: str | os.PathLike | None = None,
                    use_cache: bool = True,
                    index_cache_dir: str | os.PathLike | None = None,
                    shared_cache_dir: str | os.PathLike | None = None,
                    background: bool = False) -> list[np.ndarray]:
    """``n`` evenly spaced frames scaled to ``height`` pixels (aspect kept), for a scrub bar.

    Frames are taken at :func:`sample_indices` and are the exact decode-order frames;
    scaling uses ``cv2.INTER_AREA``. Returns a list of uint8 BGR arrays ``(height, w, 3)``.
    """
    p = check_media_path(path)
    if height < 1:
        raise ValueError(f"thumbnail height must be >= 1, got {height}")
    threads = _background(background)

    def compute() -> np.ndarray:
        with open_video(p, cache_bytes=0, index_cache_dir=index_cache_dir,
                        decoder_threads=threads) as v:
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
                              cache_dir=cache_dir, use_cache=use_cache,
                              shared_dir=shared_cache_dir))


def _background(background: bool) -> int | None:
    """Decoder threads for a job; lowers this thread's priority for a background job."""
    if not background:
        return None
    lower_thread_priority()
    return BACKGROUND_DECODER_THREADS


def _small_grey(frame: np.ndarray, scale: float) -> np.ndarray:
    grey = cv2.cvtColor(frame, cv2.COLOR_BGR2GRAY)
    h, w = grey.shape
    size = (max(16, round(w * scale)), max(16, round(h * scale)))
    return cv2.resize(grey, size, interpolation=cv2.INTER_AREA)


def motion_curve(path: str | os.PathLike, *, method: str = "flow", scale: float = 0.25,
                 cancel: Cancel = None, progress: Progress = None,
                 cache_dir: str | os.PathLike | None = None,
                 use_cache: bool = True, shared_cache_dir: str | os.PathLike | None = None,
                 background: bool = False) -> np.ndarray:
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
    threads = _background(background)

    def compute() -> np.ndarray:
        params = [] if threads is None else [cv2.CAP_PROP_N_THREADS, threads]
        cap = cv2.VideoCapture(str(p), cv2.CAP_FFMPEG, params)
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
                         cache_dir=cache_dir, use_cache=use_cache, shared_dir=shared_cache_dir)
