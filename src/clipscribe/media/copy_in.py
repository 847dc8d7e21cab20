"""Copying a folder of videos into a project's media root, all or nothing."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

from ._common import Cancel, Progress, check_cancel, report
from .errors import MediaError
from .probe import VIDEO_SUFFIXES, file_sha256

CHUNK = 8 << 20  # bytes copied between cancel checks and progress reports


def free_folder(parent: Path, name: str) -> Path:
    """``parent/name``, or ``parent/name-2``, ``-3``… whichever does not exist yet."""
    target, n = parent / name, 1
    while target.exists():
        n += 1
        target = parent / f"{name}-{n}"
    return target


def copy_target(parent: Path, name: str, source: Path) -> Path:
    """Where a copy of ``source`` goes: ``parent/name`` (or ``name-2``…), the first that does
    not exist yet or already holds an earlier or interrupted copy of ``source`` (only files of
    the same relative path and size as in ``source``, and ``.part`` leftovers), so copying
    again resumes there instead of making a second copy."""
    target, n = parent / name, 1
    while target.exists() and not _holds_copy_of(target, source):
        n += 1
        target = parent / f"{name}-{n}"
    return target


def _holds_copy_of(folder: Path, source: Path) -> bool:
    if not folder.is_dir():
        return False
    for p in folder.rglob("*"):
        if p.is_dir():
            continue
        if _is_part(p):
            continue
        twin = source / p.relative_to(folder)
        if not twin.is_file() or twin.stat().st_size != p.stat().st_size:
            return False
    return True


def _is_part(p: Path) -> bool:
    return p.name.startswith(".") and p.name.endswith(".part")


def video_files(folder: Path) -> list[Path]:
    """Every video file below ``folder`` (by suffix), sorted; hidden files and folders left out."""
    return sorted(p for p in folder.rglob("*")
                  if p.suffix.lower() in VIDEO_SUFFIXES and p.is_file()
                  and not any(part.startswith(".") for part in p.relative_to(folder).parts))


def copy_videos(source: str | os.PathLike, dest: str | os.PathLike, *, cancel: Cancel = None,
                progress: Progress = None) -> list[Path]:
    """Copy every video below ``source`` into ``dest``, keeping sub-folders.

    Progress is reported in bytes. Each file is written under a temporary name and renamed
    when complete. When ``dest`` exists (an earlier copy that was killed), the copy resumes:
    stale ``.part`` files are removed and files already there with the same SHA-256 are kept,
    not copied again. On an error or a cancel, everything this call wrote is removed again
    (and ``dest`` too when this call made it). Returns the files copied by this call.
    """
    src, out = Path(source), Path(dest)
    if not src.is_dir():
        raise MediaError(f"{src}: not a folder")
    files = video_files(src)
    if not files:
        raise MediaError(f"{src}: no video files in it ({', '.join(sorted(VIDEO_SUFFIXES))})")
    made = not out.exists()
    if not made:
        for stale in [p for p in out.rglob("*") if _is_part(p)]:
            stale.unlink()
    total = sum(f.stat().st_size for f in files)
    done, copied = 0, []
    try:
        for f in files:
            target = out / f.relative_to(src)
            if target.is_file() and file_sha256(target) == file_sha256(f):
                done += f.stat().st_size  # already copied by an earlier, interrupted run
                report(progress, done, total)
                continue
            if target.exists():
                raise MediaError(f"{target}: already there and different from {f}; not "
                                 "overwritten — move one of them away and copy again")
            target.parent.mkdir(parents=True, exist_ok=True)
            tmp = target.with_name(f".{target.name}.part")
            with open(f, "rb") as fin, open(tmp, "wb") as fout:
                while chunk := fin.read(CHUNK):
                    check_cancel(cancel, "copying videos")
                    fout.write(chunk)
                    done += len(chunk)
                    report(progress, done, total)
            shutil.copystat(f, tmp)
            tmp.replace(target)
            copied.append(target)
    except BaseException:
        if made:
            shutil.rmtree(out, ignore_errors=True)
        else:
            for p in copied + [t.with_name(f".{t.name}.part") for t in
                               (out / f.relative_to(src) for f in files)]:
                p.unlink(missing_ok=True)
        raise
    report(progress, total, total)
    return copied
