from __future__ import annotations

from pathlib import Path

import pytest

from clipscribe import Project


@pytest.fixture
def project(tmp_path: Path, make_video):
    """An empty project with two labels, two annotators and three clips."""
    with Project.create(tmp_path / "proj", user="lead") as p:
        p.define_labels(["pick up", "put down", "push"])
        p.add_annotator("ann-a")
        p.add_annotator("ann-b")
        for i in range(3):
            make_video(p.media_root / "g1" / f"c{i}.mp4", seed=i)
        rep = p.add_media(p.media_root, group_pattern=r"^(?P<group>[^/]+)/")
        assert len(rep.added) == 3
        yield p
