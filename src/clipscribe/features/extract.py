"""Clip features: decode a clip once, straight through, keep only the sampled frames, and describe
them. Results are cached per file content (SHA-256) and feature version.

Decoding straight through with ``grab`` (and ``retrieve`` only for wanted frames) was measured
2.9-5x faster than seeking to each snippet, and it gives the exact decode-order frames that
``clipscribe.media.open_video`` numbers. A clip whose header frame count is wrong is decoded a
second time with the plan for its true length, so features depend on the frames only.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
import threading
from collections.abc import Callable, Iterable, Mapping
from concurrent.futures import ThreadPoolExecutor
from dataclasses import asdict, dataclass
from pathlib import Path

import cv2
import numpy as np
import platformdirs

from ..media import JobCancelled, MediaError, file_sha256
from . import descriptors as d
from .sampling import SnippetPlan, snippet_plan

#: bump when any descriptor changes: old cache files are then ignored
FEATURE_VERSION = 2
STREAMS = ("single-frame", "appearance", "motion")

Cancel = threading.Event | Callable[[], bool] | None
Progress = Callable[[int, int], None] | None


@dataclass(frozen=True)
class FeatureRecipe:
    """How clip features are made. ``snippets`` = K segments; ``pairs`` = L flow pairs per
    snippet; frames are scaled to ``height`` pixels (aspect kept) before any descriptor."""

    snippets: int = 8
    pairs: int = 4
    height: int = 180

    def describe(self) -> str:
        return (f"features v{FEATURE_VERSION}: {self.snippets} segment-centre snippets; frames "
                f"scaled to {self.height} px high; appearance = sqrt HSV histogram 8x4x4 + HOG "
                f"(9 bins, 16-px cells, 2x2 blocks, L2-Hys, averaged per quarter) of each snippet's centre frame, mean "
                f"over snippets; single-frame = the same of the clip's middle frame; motion = DIS "
                f"'fast' optical flow of {self.pairs} consecutive frame pairs per snippet, sqrt "
                f"HOF (2x2 grid, 8 directions + still) + sqrt MBH (x and y, 2x2 grid, 8 "
                f"directions) + mean flow, averaged over pairs and snippets")

    def key(self) -> str:
        text = json.dumps({"v": FEATURE_VERSION, **asdict(self)}, sort_keys=True)
        return hashlib.sha256(text.encode()).hexdigest()[:16]


@dataclass(frozen=True)
class ClipFeatures:
    """The three feature vectors of one clip, and the frame count they were planned on."""

    single_frame: np.ndarray
    appearance: np.ndarray
    motion: np.ndarray
    frame_count: int

    def stream(self, name: str) -> np.ndarray:
        """The vector of stream ``"single-frame"``, ``"appearance"`` or ``"motion"``."""
        if name not in STREAMS:
            raise KeyError(f"no feature stream {name!r}; streams are {', '.join(STREAMS)}")
        return {"single-frame": self.single_frame, "appearance": self.appearance,
                "motion": self.motion}[name]


def default_feature_cache_dir() -> Path:
    """``platformdirs.user_cache_dir("clipscribe")/features``."""
    return Path(platformdirs.user_cache_dir("clipscribe")) / "features"


def _stop(cancel: Cancel, path: Path) -> None:
    if cancel is not None and (cancel.is_set() if isinstance(cancel, threading.Event) else cancel()):
        raise JobCancelled(f"{path}: clip features: cancelled")


def _checked(path: str | os.PathLike) -> Path:
    p = Path(path)
    if not p.is_file():
        raise MediaError(f"{p}: {'is a folder, not a video file' if p.is_dir() else 'file not found'}")
    if p.stat().st_size == 0:
        raise MediaError(f"{p}: file is empty (0 bytes)")
    return p


def _small(frame: np.ndarray, height: int) -> np.ndarray:
    h, w = frame.shape[:2]
    size = (max(16, round(w * height / h / 2) * 2), height)
    return cv2.resize(frame, size, interpolation=cv2.INTER_AREA)


def _decode(path: Path, plan: SnippetPlan | None, recipe: FeatureRecipe, cancel: Cancel,
            progress: Progress, estimate: int) -> tuple[int, dict[int, np.ndarray]]:
    """Read the clip straight through; return its true frame count and the wanted frames, scaled."""
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG)
    try:
        if not cap.isOpened():
            raise MediaError(f"{path}: not a video OpenCV can open (unknown container or codec, "
                             "or the file is truncated)")
        wanted = plan.wanted if plan is not None else frozenset()
        kept: dict[int, np.ndarray] = {}
        i = 0
        while cap.grab():
            if i in wanted:
                ok, frame = cap.retrieve()
                if not ok or frame is None:
                    raise MediaError(f"{path}: frame {i} cannot be decoded")
                kept[i] = _small(frame, recipe.height)
            i += 1
            if i % 16 == 0:
                _stop(cancel, path)
                if progress is not None:
                    progress(min(i, estimate), max(estimate, i))
        if i == 0:
            raise MediaError(f"{path}: no decodable frame (truncated, damaged or unsupported codec)")
        return i, kept
    finally:
        cap.release()


def _describe(plan: SnippetPlan, frames: Mapping[int, np.ndarray]) -> ClipFeatures:
    grey = {i: cv2.cvtColor(frames[i], cv2.COLOR_BGR2GRAY) for i in plan.flow_frames}
    engine = d.flow_engine()
    snippets = []
    for s in plan.flow_starts:
        pairs = [d.motion(d.dense_flow(grey[t], grey[t + 1], engine))
                 for t in range(s, s + plan.pairs)]
        snippets.append(np.mean(pairs, axis=0))
    motion = np.mean(snippets, axis=0) if snippets else np.zeros(d.MOTION_DIMS)
    appearance = np.mean([d.appearance(frames[c]) for c in plan.centres], axis=0)
    return ClipFeatures(d.appearance(frames[plan.middle]), appearance, motion, plan.frame_count)


def compute_clip_features(path: str | os.PathLike, recipe: FeatureRecipe = FeatureRecipe(), *,
                          frame_count: int | None = None, cancel: Cancel = None,
                          progress: Progress = None) -> ClipFeatures:
    """Features of one clip, never cached (see :func:`clip_features`)."""
    p = _checked(path)
    estimate = frame_count or 0
    if not estimate:
        cap = cv2.VideoCapture(str(p), cv2.CAP_FFMPEG)
        estimate = int(cap.get(cv2.CAP_PROP_FRAME_COUNT) or 0) if cap.isOpened() else 0
        cap.release()
    plan = snippet_plan(estimate, recipe.snippets, recipe.pairs) if estimate > 0 else None
    n, frames = _decode(p, plan, recipe, cancel, progress, estimate)
    true_plan = snippet_plan(n, recipe.snippets, recipe.pairs)
    if true_plan != plan:  # the header was wrong: plan again on the true length
        n, frames = _decode(p, true_plan, recipe, cancel, None, n)
    if progress is not None:
        progress(n, n)
    return _describe(true_plan, frames)


def cached_features_path(sha256: str, recipe: FeatureRecipe = FeatureRecipe(),
                         cache_dir: str | os.PathLike | None = None) -> Path:
    """Where the features of the file with this SHA-256 are kept for ``recipe`` (whether or
    not they are there yet)."""
    folder = Path(cache_dir) if cache_dir is not None else default_feature_cache_dir()
    return folder / f"{sha256}-features-{recipe.key()}.npz"


def count_uncached_features(sha256s: Iterable[str | None], recipe: FeatureRecipe = FeatureRecipe(),
                            cache_dir: str | os.PathLike | None = None, *,
                            stop_after: int | None = None) -> int:
    """How many of the files with these SHA-256s (None: unknown) have no features in the
    cache for ``recipe``; counting stops once it passes ``stop_after``. Plain string paths:
    a big project asks this of 100k files."""
    folder = os.fspath(cached_features_path("", recipe, cache_dir).parent)
    tail = cached_features_path("", recipe, cache_dir).name
    missing = 0
    for sha in sha256s:
        if not sha or not os.path.isfile(os.path.join(folder, sha + tail)):
            missing += 1
            if stop_after is not None and missing > stop_after:
                break
    return missing


def clip_features(path: str | os.PathLike, recipe: FeatureRecipe = FeatureRecipe(), *,
                  sha256: str | None = None, frame_count: int | None = None,
                  cancel: Cancel = None, progress: Progress = None,
                  cache_dir: str | os.PathLike | None = None,
                  use_cache: bool = True) -> ClipFeatures:
    """Features of one clip: from the cache when this file (by SHA-256) was described with this
    recipe and feature version before, else computed and stored.

    ``sha256`` (the file's hash, when the caller knows it) saves hashing the file again;
    ``frame_count`` is a hint for planning. Raises :class:`~clipscribe.media.MediaError` for a
    file that cannot be decoded and :class:`~clipscribe.media.JobCancelled` when cancelled.
    """
    p = _checked(path)
    if not use_cache:
        return compute_clip_features(p, recipe, frame_count=frame_count, cancel=cancel,
                                     progress=progress)
    target = cached_features_path(sha256 or file_sha256(p), recipe, cache_dir)
    folder = target.parent
    if target.is_file():
        try:
            with np.load(target, allow_pickle=False) as z:
                return ClipFeatures(z["single_frame"], z["appearance"], z["motion"],
                                    int(z["frame_count"]))
        except (OSError, ValueError, KeyError):
            pass  # damaged cache file: compute again
    feats = compute_clip_features(p, recipe, frame_count=frame_count, cancel=cancel,
                                  progress=progress)
    buf = io.BytesIO()
    np.savez(buf, single_frame=feats.single_frame, appearance=feats.appearance,
             motion=feats.motion, frame_count=np.int64(feats.frame_count))
    tmp = target.with_name(f".{target.name}.{os.getpid()}.{threading.get_ident()}.tmp")
    try:
        folder.mkdir(parents=True, exist_ok=True)
        tmp.write_bytes(buf.getvalue())
        os.replace(tmp, target)
    except OSError:
        tmp.unlink(missing_ok=True)  # an unwritable cache only costs recomputing next time
    return feats


@dataclass(frozen=True)
class FeatureJob:
    """One clip to describe: a key chosen by the caller, its file, and what the caller knows."""

    key: str
    path: str | os.PathLike
    sha256: str | None = None
    frame_count: int | None = None


def features_for(jobs: Iterable[FeatureJob], recipe: FeatureRecipe = FeatureRecipe(), *,
                 workers: int = 1, cancel: Cancel = None, progress: Progress = None,
                 cache_dir: str | os.PathLike | None = None
                 ) -> tuple[dict[str, ClipFeatures], dict[str, str]]:
    """Features of many clips on ``workers`` threads (OpenCV releases the GIL while decoding).

    Returns ``(features by key, reason by key)``: a clip that fails with a MediaError is skipped
    and its reason reported; nothing else stops. Progress counts clips; cancel raises
    JobCancelled after the clips in flight finish.
    """
    todo = list(jobs)
    done: dict[str, ClipFeatures] = {}
    failed: dict[str, str] = {}

    def one(job: FeatureJob) -> None:
        _stop(cancel, Path(job.path))
        try:
            done[job.key] = clip_features(job.path, recipe, sha256=job.sha256,
                                          frame_count=job.frame_count, cancel=cancel,
                                          cache_dir=cache_dir)
        except MediaError as exc:
            failed[job.key] = str(exc)

    if progress is not None:
        progress(0, len(todo))
    with ThreadPoolExecutor(max_workers=max(1, workers)) as pool:
        futures = [pool.submit(one, job) for job in todo]
        try:
            for n, fut in enumerate(futures, start=1):
                fut.result()
                if progress is not None:
                    progress(n, len(todo))
        except BaseException:
            for fut in futures:
                fut.cancel()
            raise
    return done, failed
