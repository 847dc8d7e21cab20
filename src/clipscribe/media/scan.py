"""Finding the videos below a folder, one problem at a time.

The walk never follows a symbolic link (a link is listed with where it points, so a clip is
never added twice under two names and nothing outside the media root comes in through a link),
never enters a special file system (``/proc``, ``/sys``, device folders: they hold no videos
and some never end), names a folder it cannot read with the true reason, and sets aside a name
that is not valid UTF-8 before OpenCV or the database sees it. Each problem is one skipped
entry; the walk goes on. No Qt, no database.
"""

from __future__ import annotations

import os
from dataclasses import dataclass, field
from pathlib import Path

from ._common import is_text_name, shown
from .probe import VIDEO_SUFFIXES

#: file system types that hold no media and may not even end (Linux names)
SPECIAL_FS = frozenset({
    "proc", "sysfs", "devtmpfs", "devpts", "cgroup", "cgroup2", "debugfs", "tracefs",
    "securityfs", "pstore", "bpf", "mqueue", "hugetlbfs", "configfs", "fusectl", "autofs",
    "binfmt_misc", "efivarfs", "rpc_pipefs", "nsfs", "selinuxfs"})


@dataclass
class Found:
    files: list[Path] = field(default_factory=list)
    skipped: list[tuple[Path, str]] = field(default_factory=list)  # (path, reason)


def special_mounts(mounts: str = "/proc/self/mounts") -> set[str]:
    """Mount points of special file systems (empty where the system does not list them)."""
    out = set()
    try:
        with open(mounts, encoding="utf-8", errors="replace") as f:
            for line in f:
                parts = line.split()
                if len(parts) >= 3 and parts[2] in SPECIAL_FS:
                    out.add(parts[1].replace("\\040", " "))
    except OSError:
        pass
    return out


def find_videos(base: str | os.PathLike) -> Found:
    """Every video file (by suffix) below ``base``, sorted, and what was set aside and why."""
    found = Found()
    special = special_mounts()
    stack = [Path(base)]
    while stack:
        folder = stack.pop()
        try:
            with os.scandir(folder) as it:
                entries = sorted(it, key=lambda e: e.name)
        except OSError as exc:
            found.skipped.append((folder, f"cannot read this folder ({exc.strerror or exc})"))
            continue
        for e in entries:
            path = Path(e.path)
            try:
                is_link, is_dir = e.is_symlink(), e.is_dir(follow_symlinks=False)
                is_video = not is_dir and Path(e.name).suffix.lower() in VIDEO_SUFFIXES
            except OSError as exc:
                found.skipped.append((path, f"cannot read it ({exc.strerror or exc})"))
                continue
            if not (is_dir or is_video or is_link):
                continue
            if not is_text_name(e.name):
                found.skipped.append((path, "the name is not valid UTF-8 text; rename it"))
            elif is_link:
                if is_video or e.is_dir():
                    found.skipped.append((path, f"a symbolic link (to {_target(path)}); links "
                                                "are not followed — add the file itself"))
            elif is_dir:
                if str(path) in special:
                    found.skipped.append((path, "a special file system, not scanned"))
                else:
                    stack.append(path)
            elif e.is_file(follow_symlinks=False):
                found.files.append(path)
    found.files.sort()
    return found


def _target(link: Path) -> str:
    try:
        return shown(os.readlink(link))
    except OSError as exc:
        return f"unreadable: {exc.strerror}"
