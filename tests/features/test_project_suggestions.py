"""Label suggestions through the one door: Project.train_suggester, suggest, compare_streams."""

from __future__ import annotations

import pytest

from clipscribe import Project
from clipscribe.errors import NotEnoughLabels

from .conftest import DIRECTIONS
from .synth import sliding_clip


@pytest.fixture
def labelled(tmp_path):
    """A project of 24 clips: labels 'left' and 'right' (12 each, groups by seed), plus one
    unlabelled clip and one clip whose media is damaged."""
    folder = tmp_path / "proj"
    with Project.create(folder) as p:
        p.define_labels(["left", "right"])
        p.add_annotator("ann-1")
        p.add_annotator("ann-2")
        ids = {}
        for d, (dx, dy) in DIRECTIONS.items():
            for i in range(12):
                clip = sliding_clip(folder / "media" / f"{d}-{i}.avi", dx=dx, dy=dy,
                                    seed=len(ids) + 1, size=(96, 64))
                ids[(d, i)] = p.add_clip(clip, group=f"source-{i % 4}")
                p.set_clip_label(ids[(d, i)], "ann-1", d)
                if i % 3 == 0:  # a disagreement without gold: 1 of 2 votes is below 0.6
                    p.set_clip_label(ids[(d, i)], "ann-2", "left" if d == "right" else "right")
        ids["new"] = p.add_clip(sliding_clip(folder / "media" / "new.avi", dx=2, dy=0, seed=99))
    return folder, ids


def test_no_model_gives_no_suggestion_and_a_reason(labelled):
    folder, ids = labelled
    with Project.open(folder) as p:
        assert p.suggest(ids["new"]) == []
        assert "no suggestion model yet" in p.suggestion_reason()


def test_trained_suggestions_rank_labels_and_never_set_one(labelled):
    folder, ids = labelled
    with Project.open(folder) as p:
        before = p.clip_labels()
        seen = []
        model = p.train_suggester(progress=lambda d, n: seen.append((d, n)))
        assert seen[-1][0] == seen[-1][1]
        # majority policy: the 8 clips with a 1-1 split of votes are not training labels
        assert model.trained_on == 16
        ranked = p.suggest(ids["new"])  # moves right
        assert [lab for lab, _ in ranked][0] == "right"
        assert sum(prob for _, prob in ranked) == pytest.approx(1.0)
        assert p.suggest(str(ids[("left", 1)]))[0][0] == "left"
        assert p.suggestion_reason() == ""
        assert p.clip_labels() == before


def test_too_few_labels_is_a_clear_refusal(tmp_path):
    folder = tmp_path / "few"
    with Project.create(folder) as p:
        p.define_labels(["left", "right"])
        p.add_annotator("ann-1")
        for i in range(3):
            c = p.add_clip(sliding_clip(folder / "media" / f"{i}.avi", dx=1, dy=0, seed=i))
            p.set_clip_label(c, "ann-1", "left")
        with pytest.raises(NotEnoughLabels, match="not enough labels yet: 3 of 10"):
            p.train_suggester()
        assert p.suggest(c) == []
        assert p.suggestion_reason().startswith("not enough labels yet: 3 of 10")
        with pytest.raises(NotEnoughLabels):
            p.compare_streams()


def test_compare_streams_predicts_every_training_clip_once(labelled):
    folder, ids = labelled
    with Project.open(folder) as p:
        result = p.compare_streams(folds=4, seed=0, n_boot=100)
    assert set(result.accuracy) == {"single-frame", "appearance", "motion", "fused"}
    trained = {ids[(d, i)] for d in DIRECTIONS for i in range(12) if i % 3}
    for stream, preds in result.predictions.items():
        assert set(preds) == trained
    assert result.accuracy["motion"] >= 0.9
    assert 0 < result.weight < 1 and result.recipe


def test_a_damaged_clip_is_skipped_and_reported(labelled):
    folder, ids = labelled
    odd = sliding_clip(folder / "media" / "odd.avi", dx=2, dy=0, seed=4242)  # content seen nowhere else
    with Project.open(folder) as p:
        odd_id = p.add_clip(odd, group="source-odd")
        p.set_clip_label(odd_id, "ann-1", "right")
        odd.write_bytes(b"damaged" * 200)  # broken after it was added
        p.train_suggester()
        assert p.suggest(odd_id) == []
        assert "odd.avi" in p.suggestion_reason(odd_id)
        assert p.suggest(ids["new"])  # the others still work


def test_features_missing_counts_clips_without_cached_features(labelled):
    folder, ids = labelled
    with Project.open(folder) as p:
        p.train_suggester()  # computes every clip's features
        clips = len(p.clips())
        assert p.features_missing() == (0, clips)
        assert p.features_missing(labelled_only=True) == (0, 16)
        fresh = sliding_clip(folder / "media" / "fresh.avi", dx=0, dy=3, seed=12345)
        p.add_clip(fresh)  # content never seen: its features are not in the cache
        assert p.features_missing() == (1, clips + 1)
        assert p.features_missing(labelled_only=True) == (0, 16)
        p.add_clip(sliding_clip(folder / "media" / "fresh2.avi", dx=3, dy=0, seed=54321))
        assert p.features_missing() == (2, clips + 2)
        assert p.features_missing(stop_after=0) == (1, clips + 2)  # counting stopped early
