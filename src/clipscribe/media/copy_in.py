"""Copying a folder of videos into a project's media root, all or nothing."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

from ._common import Cancel, Progress, check_cancel, report
from .errors import MediaError
from .probe import VIDEO_SUFFIXES

CHUNK = 8 << 20  # bytes copied between cancel checks and progress reports


def free_folder(parent: Path, name: str) -> Path:
    """``parent/name``, or ``parent/name-2``, ``-3``… whichever does not exist yet."""
    target, n = parent / name, 1
    while target.exists():
        n += 1
        target = parent / f"{name}-{n}"
    return target


def video_files(folder: Path) -> list[Path]:
    """Every video file below ``folder`` (by suffix), sorted; hidden files and folders left out."""
    return sorted(p for p in folder.rglob("*")
                  if p.suffix.lower() in VIDEO_SUFFIXES and p.is_file()
                  and not any(part.startswith(".") for part in p.relative_to(folder).parts))


def copy_videos(source: str | os.PathLike, dest: str | os.PathLike, *, cancel: Cancel = None,
                progress: Progress = None) -> list[Path]:
    """Copy every video below ``source`` into the new folder ``dest``, keeping sub-folders.

    Progress is reported in bytes. Each file is written under a temporary name and renamed
    when complete; on an error or a cancel, everything this call wrote is removed again, so
    ``dest`` either holds all the videos or does not exist. Returns the copied files.
    """
    src, out = Path(source), Path(dest)
    if not src.is_dir():
        raise MediaError(f"{src}: not a folder")
    if out.exists():
        raise MediaError(f"{out}: already exists")
    files = video_files(src)
    if not files:
        raise MediaError(f"{src}: no video files in it ({', '.join(sorted(VIDEO_SUFFIXES))})")
    total = sum(f.stat().st_size for f in files)
    done, copied = 0, []
    try:
        for f in files:
            target = out / f.relative_to(src)
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
        shutil.rmtree(out, ignore_errors=True)
        raise
    report(progress, total, total)
    return copied
