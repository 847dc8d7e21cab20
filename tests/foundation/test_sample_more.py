"""The full sample: the core 12 clips as they are, and later workcells that give label
suggestions enough labelled clips to learn from, with a few clips left to label."""

from __future__ import annotations

from collections import Counter

import pytest

from clipscribe import Project
from clipscribe.sample import build_sample


@pytest.fixture(scope="module")
def full_sample(tmp_path_factory):
    folder = tmp_path_factory.mktemp("full") / "project"
    return folder, build_sample(folder, later_workcells=True)


def _core(folder):
    with Project.open(folder) as p:
        keep = {c.id for c in p.clips() if c.id <= 12}
        return ([r for r in p.clip_labels() if r[0] in keep],
                [r for r in p.captions() if r[0] in keep],
                [(c.id, c.path, c.group, c.sha256) for c in p.clips() if c.id in keep])


def test_the_later_workcells_leave_the_core_clips_as_they_were(full_sample, sample_master):
    assert _core(full_sample[0]) == _core(sample_master)


def test_full_sample_shape(full_sample):
    folder, summary = full_sample
    with Project.open(folder) as p:
        clips = p.clips()
        assert summary["clips"] == len(clips) == 52
        assert len({c.group for c in clips}) == 8
        labelled = {c for c, _, _ in p.clip_labels()}
        assert len([c for c in clips if c.id not in labelled]) == 4  # left for the annotators
        # the suggester's training labels: every label learnable (5 clips in 2+ groups)
        labels = p._suggestions.training_labels()
        groups = {c.id: c.group for c in clips}
        per = Counter(labels.values())
        assert set(per) == {l.name for l in p.labels()}
        for name in per:
            assert per[name] >= 5
            assert len({groups[c] for c, lab in labels.items() if lab == name}) >= 2
        # annotator-2's confusion holds in the later workcells too
        assert "stack" not in {l for _, w, l in p.clip_labels() if w == "annotator-2"}


def test_full_sample_keeps_each_annotators_captions_distinct(full_sample):
    with Project.open(full_sample[0]) as p:
        caps = Counter((c, w, t) for c, w, t in p.captions())
        assert max(caps.values()) == 1
