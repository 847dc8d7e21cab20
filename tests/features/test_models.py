"""Suggestion models against outside references: scikit-learn called directly, numpy's weighted
mean, group-exclusive splits, and a data set where colour and motion each carry half a class."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn.calibration import CalibratedClassifierCV
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from clipscribe.errors import NotEnoughLabels, RecordError
from clipscribe.features import models as M


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 9), st.sampled_from("abc")), min_size=8, max_size=60),
       st.integers(2, 6), st.integers(0, 10_000))
def test_a_grouped_split_never_puts_a_group_on_both_sides(rows, folds, seed):
    groups = np.array([f"g{gr}" for gr, _ in rows])
    y = np.array([lab for _, lab in rows])
    try:
        splits = M.grouped_splits(y, groups, folds, seed, every_class_trained=False)
    except NotEnoughLabels:
        assert len(set(groups)) < 2 or max(np.unique(y, return_counts=True)[1]) < 2
        return
    seen_test = np.zeros(len(y), int)
    for tr, te in splits:
        assert not set(groups[tr]) & set(groups[te])
        seen_test[te] += 1
    assert np.all(seen_test == 1)  # every clip is held out exactly once


def _blobs(seed=0, n=60, k=3, d=6):
    rng = np.random.default_rng(seed)
    y = np.array([f"c{i % k}" for i in range(n)])
    X = rng.normal(size=(n, d)) + np.eye(k, d)[np.arange(n) % k] * 2.5
    groups = np.array([f"g{i % 10}" for i in range(n)])
    return X, y, groups


def test_a_stream_classifier_equals_the_scikit_learn_pipeline_called_directly():
    X, y, groups = _blobs()
    m = M.train({"appearance": X, "motion": X[:, ::-1]}, y, groups)
    for stream, data in (("appearance", X), ("motion", X[:, ::-1])):
        direct = CalibratedClassifierCV(
            make_pipeline(StandardScaler(), LogisticRegression(C=m.c[stream], max_iter=1000)),
            method="temperature", cv=m.splits).fit(data, y)
        np.testing.assert_allclose(m.stream_proba(stream, data), direct.predict_proba(data),
                                   rtol=1e-9, atol=1e-12)
        assert tuple(direct.classes_) == m.classes


def test_fused_probabilities_are_numpy_s_weighted_mean():
    X, y, groups = _blobs(seed=3)
    m = M.train({"appearance": X, "motion": X ** 2}, y, groups)
    pa, pm = m.stream_proba("appearance", X), m.stream_proba("motion", X ** 2)
    expected = np.average(np.stack([pa, pm]), axis=0, weights=[m.weight, 1 - m.weight])
    np.testing.assert_allclose(m.proba({"appearance": X, "motion": X ** 2}), expected)
    assert m.weight in M.WEIGHT_GRID
    ranked = m.ranked({"appearance": X[0], "motion": X[0] ** 2})
    assert [p for _, p in ranked] == sorted((p for _, p in ranked), reverse=True)
    assert sum(p for _, p in ranked) == pytest.approx(1.0)


def test_the_weight_grid_holds_the_even_and_the_one_third_split():
    assert 1 / 2 in M.WEIGHT_GRID and 1 / 3 in M.WEIGHT_GRID and 2 / 3 in M.WEIGHT_GRID


@pytest.mark.parametrize("y, groups, have", [
    (["a"] * 10, [f"g{i}" for i in range(10)], 5),                       # one label only
    (["a"] * 6 + ["b"] * 3, [f"g{i}" for i in range(9)], 8),              # b has too few clips
    (["a"] * 6 + ["b"] * 6, [f"g{i}" for i in range(6)] + ["h"] * 6, 10),  # b in one group
    ([], [], 0),
])
def test_too_few_labels_say_how_many_of_how_many(y, groups, have):
    with pytest.raises(NotEnoughLabels, match=f"not enough labels yet: {have} of 10") as info:
        M.usable_classes(y, groups)
    assert isinstance(info.value, RecordError)
    assert (info.value.have, info.value.need) == (have, 10)


def test_labels_with_too_few_clips_are_left_out_of_training():
    X, y, groups = _blobs(n=60, k=3)
    y = y.astype(object)
    y[:3] = "rare"
    m = M.train({"appearance": X, "motion": X}, y, groups)
    assert "rare" not in m.classes and m.left_out == {"rare": 3}


def _part(labels, i):
    return [lab.split()[i] for lab in labels]


def test_motion_gets_direction_appearance_gets_colour_and_fused_beats_both(colour_and_motion):
    X, y, groups, ids = colour_and_motion
    result = M.compare(X, y, groups, ids, folds=4, seed=0, n_boot=200)
    pred = {s: [result.predictions[s][i] for i in ids] for s in M.ALL_STREAMS}
    colour_right = {s: np.mean(np.array(_part(pred[s], 0)) == _part(y, 0)) for s in pred}
    direction_right = {s: np.mean(np.array(_part(pred[s], 1)) == _part(y, 1)) for s in pred}
    assert direction_right["motion"] >= 0.9
    assert colour_right["appearance"] >= 0.9 and colour_right["single-frame"] >= 0.9
    assert result.accuracy["fused"] > max(result.accuracy["appearance"], result.accuracy["motion"])
    # the scores are those of the out-of-fold predictions
    for s in M.ALL_STREAMS:
        assert result.accuracy[s] == pytest.approx(np.mean(np.array(pred[s]) == np.array(y)))
        iv = result.intervals["accuracy"][s]
        assert iv.low <= result.accuracy[s] <= iv.high
        assert result.confusion[s].sum() == len(y)
    assert result.predictions["fused"][str(ids[0])] == result.predictions["fused"][ids[0]]
    assert "StratifiedGroupKFold" in result.recipe and "temperature" in result.recipe
    assert result.to_dict()["fusion_weight"]["appearance"] == result.weight


def test_macro_f1_matches_scikit_learn(colour_and_motion):
    from sklearn.metrics import f1_score
    X, y, groups, ids = colour_and_motion
    result = M.compare(X, y, groups, ids, folds=3, seed=1, n_boot=50)
    for s in M.ALL_STREAMS:
        pred = [result.predictions[s][i] for i in ids]
        assert result.macro_f1[s] == pytest.approx(f1_score(y, pred, average="macro"))
