"""Small helpers shared by the media modules: cancel signals, progress, cache folders, file checks."""

from __future__ import annotations

import os
import threading
from collections.abc import Callable
from pathlib import Path

import cv2
import platformdirs

from .errors import JobCancelled, MediaError

#: A cancel signal: a ``threading.Event`` (set means stop) or a callable returning True to stop.
Cancel = threading.Event | Callable[[], bool] | None
#: A progress callback ``progress(done, total)``.
Progress = Callable[[int, int], None] | None


def default_cache_dir() -> Path:
    """The per-user cache folder for clipscribe (``platformdirs.user_cache_dir("clipscribe")``)."""
    return Path(platformdirs.user_cache_dir("clipscribe"))


def lower_thread_priority(nice: int = 10) -> bool:
    """Let the calling thread give way to the others of the process (the viewer's decoder).

    On Linux the nice value belongs to a thread, and the decoder threads FFmpeg starts from it
    later inherit it; raising it to ``nice`` makes background decoding run on what the
    foreground leaves. Returns False where this cannot be done (other systems, no permission).
    A raised nice value cannot be lowered again without privileges: call it on a worker thread
    that only ever runs background work.
    """
    try:
        tid = threading.get_native_id()
        if os.getpriority(os.PRIO_PROCESS, tid) < nice:
            os.setpriority(os.PRIO_PROCESS, tid, nice)
        return True
    except (AttributeError, OSError):
        return False


def is_cancelled(cancel: Cancel) -> bool:
    """True when the cancel signal says stop."""
    if cancel is None:
        return False
    if isinstance(cancel, threading.Event):
        return cancel.is_set()
    return bool(cancel())


def check_cancel(cancel: Cancel, what: str) -> None:
    """Raise :class:`JobCancelled` naming ``what`` when the cancel signal is set."""
    if is_cancelled(cancel):
        raise JobCancelled(f"{what}: cancelled")


def report(progress: Progress, done: int, total: int) -> None:
    if progress is not None:
        progress(done, total)


def shown(path: str | os.PathLike) -> str:
    """A path as printable text: bytes that are not UTF-8 appear as ``\\xNN`` escapes."""
    return os.fsencode(path).decode("utf-8", "backslashreplace")


def is_text_name(path: str | os.PathLike) -> bool:
    """True when the path's bytes are valid UTF-8 (OpenCV and the database need text)."""
    try:
        os.fsencode(path).decode("utf-8")
    except UnicodeDecodeError:
        return False
    return True


def check_media_path(path: str | os.PathLike) -> Path:
    """Reject paths that cannot be a video before OpenCV sees them; return the path."""
    p = Path(path)
    if not is_text_name(p):
        raise MediaError(f"{shown(p)}: the file name is not valid UTF-8 text; rename the file")
    if not p.exists():
        raise MediaError(f"{p}: file not found")
    if p.is_dir():
        raise MediaError(f"{p}: is a folder, not a video file")
    if p.stat().st_size == 0:
        raise MediaError(f"{p}: file is empty (0 bytes)")
    try:  # OpenCV would only say it cannot open the file; this says why
        with open(p, "rb") as f:
            f.read(1)
    except OSError as exc:
        raise MediaError(f"{p}: cannot read the file ({exc.strerror or exc})") from None
    return p


def open_capture(path: Path, threads: int | None = None) -> cv2.VideoCapture:
    """A decoding capture of ``path`` with ``threads`` FFmpeg threads (None: FFmpeg's choice)."""
    params = [] if threads is None else [cv2.CAP_PROP_N_THREADS, int(threads)]
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG, params)
    if not cap.isOpened():
        cap.release()
        raise MediaError(f"{path}: not a video OpenCV can open (unknown container or codec, "
                         "or the file is truncated)")
    return cap


def atomic_write_bytes(target: Path, data: bytes) -> None:
    """Write to a temporary file beside ``target`` and rename it into place (no half-written file)."""
    target.parent.mkdir(parents=True, exist_ok=True)
    tmp = target.with_name(f".{target.name}.{os.getpid()}.{threading.get_ident()}.tmp")
    try:
        tmp.write_bytes(data)
        os.replace(tmp, target)
    except BaseException:
        tmp.unlink(missing_ok=True)  # a full disk leaves no half-written file behind
        raise
