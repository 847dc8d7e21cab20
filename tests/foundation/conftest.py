from __future__ import annotations

import shutil
from pathlib import Path

import cv2
import numpy as np
import pytest

from clipscribe import Project


def write_video(path: Path, n: int = 12, size: tuple[int, int] = (64, 48), seed: int = 0) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    out = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*"mp4v"), 10.0, size)
    rng = np.random.default_rng(seed)
    for i in range(n):
        img = np.full((size[1], size[0], 3), (i * 20) % 255, np.uint8)
        img[:8, :8] = rng.integers(0, 255, 3)
        out.write(img)
    out.release()
    return path


@pytest.fixture
def project(tmp_path: Path):
    """An empty project with two labels, two annotators and three clips."""
    with Project.create(tmp_path / "proj", user="lead") as p:
        p.define_labels(["pick up", "put down", "push"])
        p.add_annotator("ann-a")
        p.add_annotator("ann-b")
        for i in range(3):
            write_video(p.media_root / "g1" / f"c{i}.mp4", seed=i)
        rep = p.add_media(p.media_root, group_pattern=r"^(?P<group>[^/]+)/")
        assert len(rep.added) == 3
        yield p


@pytest.fixture(scope="session")
def sample_dir(sample_build) -> Path:
    return sample_build[0]


@pytest.fixture
def sample_copy(sample_dir: Path, tmp_path: Path) -> Path:
    d = tmp_path / "sample"
    shutil.copytree(sample_dir, d)
    return d


@pytest.fixture
def make_video():
    return write_video
