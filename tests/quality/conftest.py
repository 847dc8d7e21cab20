from __future__ import annotations

import pytest

from clipscribe import Project


@pytest.fixture
def team(tmp_path, make_video):
    """A lead, three annotators, two labels and eight clips in three folders (3, 3 and 2 clips),
    grouped by folder; the caption guideline asks for three captions per clip."""
    with Project.create(tmp_path / "proj", user="lead") as p:
        p.define_labels(["stack", "sort"])
        for name in ("ann-a", "ann-b", "ann-c"):
            p.add_annotator(name)
        n = 0
        for folder, k in (("bench-1", 3), ("bench-2", 3), ("bench-3", 2)):
            for i in range(k):
                make_video(p.media_root / folder / f"take-{i}.mp4", n=8, seed=n)
                n += 1
        p.add_media(p.media_root, group_pattern=r"^(?P<group>.+)/[^/]+$")
        p.update_settings(caption_guideline={**p.settings.caption_guideline.model_dump(),
                                             "captions_per_clip": 3})
        yield p
