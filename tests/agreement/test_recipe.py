"""Recipes, verbal bands and the bootstrap machinery."""

import json
import pickle

import numpy as np
import pytest

from clipscribe._version import __version__
from clipscribe.agreement import Recipe, cohen_kappa, corpus_bleu, interpret, krippendorff_alpha
from clipscribe.agreement.bootstrap import percentile_interval, replicate_sums


def test_recipe_text_and_dict():
    k = cohen_kappa([1, 2, 3, 1] * 30, [1, 2, 2, 1] * 30, weights="linear")
    assert k.recipe.text() == f"kappa|cohen|weights=linear|raters=2|n=120|v{__version__}"
    d = k.recipe.to_dict()
    assert json.loads(json.dumps(d))["options"] == {"weights": "linear"}
    assert pickle.loads(pickle.dumps(k)).recipe == k.recipe
    b = corpus_bleu(["a b c d"], [["a b c d"]])
    assert b.recipe.text() == f"bleu|corpus|order=4|tok=13a|smooth=none|n=1|v{__version__}"
    a = krippendorff_alpha([[1, 2], [1, 2]], level="ordinal")
    assert a.recipe.option("level") == "ordinal"
    r = Recipe.make("x", "y", label_set_version="v3", n_items=2)
    assert r.replace(note="n").text() == f"x|y|n=2|labelset=v3|note=n|v{__version__}"


@pytest.mark.parametrize("value,expected", [
    (-0.01, "poor"), (0.0, "slight"), (0.20, "slight"), (0.21, "fair"), (0.40, "fair"),
    (0.41, "moderate"), (0.60, "moderate"), (0.61, "substantial"), (0.80, "substantial"),
    (0.81, "almost perfect"), (1.0, "almost perfect"), (float("nan"), "undefined"),
])
def test_landis_koch_bands(value, expected):
    # Landis & Koch (1977), Biometrics 33(1):159-174, table of benchmarks
    assert interpret(value) == expected


def test_index_resampling_matches_explicit_draws():
    rng = np.random.default_rng(0)
    stats = rng.random((50, 3))  # all rows distinct: the index path
    got = replicate_sums(stats, n_boot=7, seed=11)
    draws = np.random.default_rng(11).integers(0, 50, size=(7, 50), dtype=np.int32)
    assert np.allclose(got, stats[draws].sum(axis=1), atol=1e-12)


def test_grouped_resampling_has_bootstrap_moments():
    # 3 distinct rows: multinomial path. Mean of the sums = U * mean row; variance per column
    # = U * var (sampling with replacement).
    stats = np.repeat(np.array([[0.0], [1.0], [3.0]]), [40, 40, 20], axis=0)
    sums = replicate_sums(stats, n_boot=20000, seed=2)[:, 0]
    assert sums.mean() == pytest.approx(100 * stats.mean(), rel=0.01)
    assert sums.var() == pytest.approx(100 * stats.var(), rel=0.05)
    keyed = replicate_sums(stats, n_boot=50, seed=2, row_keys=stats[:, 0].astype(int))
    assert np.array_equal(keyed, replicate_sums(stats, n_boot=50, seed=2))


def test_percentile_interval_ignores_nan():
    iv = percentile_interval(np.array([np.nan, *range(101)]), level=0.9, n_boot=102, seed=0)
    assert (iv.low, iv.high) == (pytest.approx(5.0), pytest.approx(95.0))
    assert np.isnan(percentile_interval(np.array([np.nan]), level=0.95, n_boot=1, seed=0).low)
