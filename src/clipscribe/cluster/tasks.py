"""What a worker does for one clip or one file, and how the client tells a clip's work is done.

A task holds paths (already mapped to the worker's mounts) and numbers; a result holds numbers
and short reasons. Every kind of work is done by the engines' public functions with the cache
folders named in the task, so the files they write are the ones the workbench and the label
suggestions read later. A failure of one kind (a missing file, a broken video) is caught and
returned as a reason; it never stops the other kinds or the run.

Kinds, and what "done" means for each (checked by the client before it sends a clip):

============  ======================================================  ===========================
kind          work                                                    done when
============  ======================================================  ===========================
index         frame index (true frame count, keyframes)               index file in the cache
thumbs        the scrub bar's thumbnail strip (24 frames, 56 px)      result file in the cache
motion        the scrub bar's motion curve (optical flow, 1/4 size)   result file in the cache
fingerprint   perceptual fingerprint (16 frame hashes, majority)      the clip's database column
features      clip features for label suggestions (default recipe)    feature file in the cache
============  ======================================================  ===========================
"""

from __future__ import annotations

import hashlib
import json
import os
import time
from dataclasses import dataclass, field
from pathlib import Path

from .. import media
from ..features import FeatureRecipe, clip_features, default_feature_cache_dir
from ..media.index import default_index_dir, load_or_build_index
from ..media.jobs import JOB_CACHE_VERSION, default_job_cache_dir

KINDS = ("index", "thumbs", "motion", "fingerprint", "features")
#: the workbench's scrub bar (ui/workbench/jobs_view.py): strip of 24 thumbnails, 56 px high
THUMBS = {"n": 24, "height": 56}
#: the workbench's motion curve: dense optical flow on frames scaled to a quarter
MOTION = {"method": "flow", "scale": 0.25}
#: frame hashes per clip fingerprint (the leakage check's default)
FINGERPRINT_FRAMES = 16
FEATURES = FeatureRecipe()


@dataclass(frozen=True)
class CacheFolders:
    """Where the engines keep results: ``root/frame-index``, ``root/jobs`` and
    ``root/features``. ``root`` None is the per-user cache folder of the machine that reads or
    writes (``platformdirs.user_cache_dir("clipscribe")``, which follows ``XDG_CACHE_HOME``)."""

    root: str | None = None

    def folder(self, name: str) -> Path:
        if self.root is not None:
            return Path(self.root) / name
        return {"frame-index": default_index_dir(), "jobs": default_job_cache_dir(),
                "features": default_feature_cache_dir()}[name]


def _job_file(folders: CacheFolders, sha256: str, name: str, params: dict) -> Path:
    # the name media.jobs gives a job's result (tests check it against a real run)
    recipe = json.dumps({"v": JOB_CACHE_VERSION, **params}, sort_keys=True)
    return folders.folder("jobs") / f"{sha256}-{name}-{hashlib.sha256(recipe.encode()).hexdigest()[:16]}.npy"


def cache_file(kind: str, sha256: str, folders: CacheFolders, *,
               index_key: str | None = None) -> Path | None:
    """The cache file that holds ``kind`` for content ``sha256`` (None: kept in the database).
    The frame index is kept under the media engine's own cheap key of the file
    (:func:`clipscribe.media.index.index_key`), which the caller reads from the file."""
    if kind == "index":
        return folders.folder("frame-index") / f"{index_key or sha256}.npz"
    if kind == "thumbs":
        return _job_file(folders, sha256, "thumbs", THUMBS)
    if kind == "motion":
        return _job_file(folders, sha256, "motion", MOTION)
    if kind == "features":
        return folders.folder("features") / f"{sha256}-features-{FEATURES.key()}.npz"
    if kind == "fingerprint":
        return None
    raise ValueError(f"no kind of work {kind!r}; kinds are {', '.join(KINDS)}")


def is_done(kind: str, sha256: str, fingerprint: int | None, folders: CacheFolders, *,
            index_key: str | None = None) -> bool:
    """Whether ``kind`` is done for a clip with this content and stored fingerprint."""
    target = cache_file(kind, sha256, folders, index_key=index_key)
    return fingerprint is not None if target is None else target.is_file()


@dataclass(frozen=True)
class ClipTask:
    """One clip's missing work, as sent to a worker (paths in the worker's terms)."""

    clip_id: int
    path: str
    sha256: str
    frame_count: int
    kinds: tuple[str, ...]
    cache: str | None = None


@dataclass
class ClipResult:
    """What came back for one clip: the numbers the database keeps and a reason per kind that
    failed."""

    clip_id: int
    fingerprint: int | None = None
    frame_count: int | None = None
    failed: dict[str, str] = field(default_factory=dict)
    seconds: float = 0.0


def _reason(exc: BaseException) -> str:
    if isinstance(exc, media.MediaError):
        return str(exc)
    if isinstance(exc, OSError):
        return f"{exc.filename or 'file'}: {exc.strerror or exc}"
    return f"{type(exc).__name__}: {exc}"


def work_on_clip(task: ClipTask) -> ClipResult:
    """Do each kind of ``task`` (runs on a worker; no database, no Qt)."""
    t0 = time.perf_counter()
    out = ClipResult(task.clip_id)
    folders = CacheFolders(task.cache)
    jobs, index_dir = folders.folder("jobs"), folders.folder("frame-index")
    path = Path(task.path)
    if not path.is_file():
        why = f"{task.path}: {'is a folder, not a video file' if path.is_dir() else 'file not found'}"
        out.failed = dict.fromkeys(task.kinds, why)
        return out
    for kind in task.kinds:
        try:
            if kind == "index":
                out.frame_count = load_or_build_index(path, task.sha256,
                                                      index_dir=index_dir).frame_count
            elif kind == "thumbs":
                media.thumbnail_strip(path, THUMBS["n"], height=THUMBS["height"], cache_dir=jobs,
                                      index_cache_dir=index_dir)
            elif kind == "motion":
                media.motion_curve(path, method=MOTION["method"], scale=MOTION["scale"],
                                   cache_dir=jobs)
            elif kind == "fingerprint":
                out.fingerprint = media.clip_fingerprint(path, FINGERPRINT_FRAMES, cache_dir=jobs,
                                                         index_cache_dir=index_dir)
            elif kind == "features":
                clip_features(path, FEATURES, sha256=task.sha256, frame_count=task.frame_count,
                              cache_dir=folders.folder("features"))
            else:
                out.failed[kind] = f"no kind of work {kind!r}"
        except Exception as exc:  # noqa: BLE001 - reported per clip and kind, never fatal
            out.failed[kind] = _reason(exc)
    out.seconds = time.perf_counter() - t0
    return out


@dataclass(frozen=True)
class FileTask:
    """One file to read for adding it as a clip (path in the worker's terms)."""

    key: str
    path: str
    cache: str | None = None


@dataclass(frozen=True)
class FileFacts:
    """A file's header facts, true frame count and SHA-256; or the reason it cannot be read."""

    key: str
    sha256: str = ""
    fps: float = 0.0
    frame_count: int = 0
    width: int = 0
    height: int = 0
    problem: str | None = None


def probe_file(task: FileTask) -> FileFacts:
    """Probe the header, hash the bytes and build (and cache) the frame index, as adding a clip
    does in one process."""
    try:
        header = media.probe(task.path)
        digest = media.file_sha256(task.path)
        index = load_or_build_index(task.path, digest,
                                    index_dir=CacheFolders(task.cache).folder("frame-index"))
    except Exception as exc:  # noqa: BLE001 - the file is skipped with the reason
        return FileFacts(task.key, problem=_reason(exc))
    return FileFacts(task.key, digest, header.fps, index.frame_count, header.width, header.height)
