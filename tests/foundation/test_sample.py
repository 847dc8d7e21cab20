"""The sample generator: deterministic, quick, and disagreeing the way people do."""

from __future__ import annotations

from collections import Counter

from clipscribe import Project
from clipscribe.sample import build_sample


def _records(folder):
    with Project.open(folder) as p:
        return p.clip_labels(), p.captions(), [(g.clip, g.annotator, g.start, g.end) for g in p.segments()], \
            [c.sha256 for c in p.clips()]


def test_sample_is_deterministic(sample_master, tmp_path):
    build_sample(tmp_path / "again")
    assert _records(sample_master)[:3] == _records(tmp_path / "again")[:3]


def test_sample_shape(sample_master):
    with Project.open(sample_master) as p:
        clips = p.clips()
        assert len(clips) == 12 and len({c.group for c in clips}) == 4
        assert all(c.consent and c.licence for c in clips)
        roles = Counter(a.role for a in p.annotators())
        assert roles == {"annotator": 3, "lead": 1}
        labels = p.clip_labels()
        # the systematic confusion: annotator-2 never says "stack"
        assert "stack" in {l for _, w, l in labels if w == "annotator-1"}
        assert "stack" not in {l for _, w, l in labels if w == "annotator-2"}
        # the careless annotator skipped clips (missing ratings)
        assert sum(1 for _, w, _ in labels if w == "annotator-3") < 12
        vague = [t for _, w, t in p.captions() if w == "annotator-3" and "something" in t]
        assert vague
