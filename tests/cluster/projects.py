"""Small projects of generated clips for the cluster tests."""

from __future__ import annotations

from pathlib import Path

from videos import write_video

from clipscribe import Project


def make_project(folder: Path, n: int = 5, *, size=(64, 48), frames: int = 16) -> Path:
    """A project of ``n`` clips of random pixels (each different) in two folders."""
    with Project.create(folder) as p:
        for i in range(n):
            write_video(p.media_root / f"g{i % 2}" / f"c{i}.mp4", n=frames, size=size, seed=i,
                        noise=True)
        rep = p.add_media(p.media_root, group_pattern=r"^(?P<group>[^/]+)/")
        assert len(rep.added) == n
    return folder
