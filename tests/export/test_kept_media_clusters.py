"""The clusters of look-alike clips (fingerprints within the radius) are kept in the project's
result cache under a key made of the fingerprints themselves: a plan after the captions changed
reuses them, a changed fingerprint or radius computes them again, and the plan is the same
either way."""

import shutil

import pytest

from clipscribe import Project

from .test_kept_caption_clusters import count_calls


@pytest.fixture
def counted(monkeypatch):
    """The (fingerprints, radius) each call of the clustering engine was given."""
    return count_calls(monkeypatch, "near_clusters", lambda codes, radius: (codes.tolist(), radius))


def _media_findings(plan):
    return [(f.kind, f.clips, f.details.get("links")) for f in plan.leakage.findings
            if "media" in f.kind]


def test_a_plan_after_a_caption_changed_reuses_the_media_clusters(sample_copy, counted):
    with Project.open(sample_copy) as p:
        assert p.missing_fingerprints() == 0  # every clip of the sample has one
        first = p.plan_export(seed=0)
        caption = p.caption_rows()[0]
        p.update_caption(caption.id, "a caption nobody wrote before, about a blue block")
        again = p.plan_export(seed=0)                 # a caption changed, not the media
        assert len(counted) == 1
        shutil.rmtree(sample_copy / ".clipscribe-cache" / "results")
        fresh = p.plan_export(seed=0)                 # nothing kept: computed again
        assert len(counted) == 2 and counted[0] == counted[1]
    assert _media_findings(again) == _media_findings(fresh) == _media_findings(first)
    assert again.assignment == fresh.assignment


def test_a_changed_fingerprint_or_radius_computes_them_again(sample_copy, counted):
    with Project.open(sample_copy) as p:
        p.plan_export()
        p.plan_export(hamming_radius=4)               # another radius: computed for it
        clip = next(c for c in p.clips() if c.fingerprint is not None)
        p.set_fingerprint(clip.id, (clip.fingerprint ^ 1) % (1 << 64))
        p.plan_export(hamming_radius=4)               # another fingerprint: computed again
        p.plan_export(hamming_radius=4)               # the same again: kept
    assert [r for _, r in counted] == [8, 4, 4]
    assert counted[1][0] != counted[2][0]
