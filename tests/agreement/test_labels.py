"""Label agreement checked against reference libraries and published worked examples."""

import krippendorff
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn.metrics import cohen_kappa_score
from statsmodels.stats.inter_rater import fleiss_kappa as sm_fleiss

from clipscribe.agreement import (cohen_kappa, confusion_matrix, fleiss_kappa,
                                  krippendorff_alpha, observed_agreement)

# Fleiss (1971), Psychol. Bull. 76(5):378-382, table as reproduced in the Wikipedia article
# "Fleiss' kappa" (10 subjects x 5 categories x 14 raters); typed in from memory and checked
# against statsmodels below. Published kappa = 0.210.
FLEISS_1971 = [
    [0, 0, 0, 0, 14], [0, 2, 6, 4, 2], [0, 0, 3, 5, 6], [0, 3, 9, 2, 0], [2, 2, 8, 1, 1],
    [7, 7, 0, 0, 0], [3, 2, 6, 3, 0], [2, 5, 3, 2, 2], [6, 5, 2, 1, 0], [0, 2, 2, 3, 7],
]

# Krippendorff (2011) "Computing Krippendorff's Alpha-Reliability", 4 observers x 12 units with
# missing values; the printed alphas (nominal 0.743, ordinal 0.815, interval 0.849) are from
# memory and verified with the krippendorff package in the test below.
K2011 = np.array([
    [1, 2, 3, 3, 2, 1, 4, 1, 2, np.nan, np.nan, np.nan],
    [1, 2, 3, 3, 2, 2, 4, 1, 2, 5, np.nan, 3],
    [np.nan, 3, 3, 3, 2, 3, 4, 2, 2, 5, 1, np.nan],
    [1, 2, 3, 3, 2, 4, 4, 1, 2, 5, 1, np.nan],
])


def test_fleiss_1971_worked_example():
    k = fleiss_kappa(FLEISS_1971)
    assert round(k, 3) == 0.210  # Fleiss (1971) via Wikipedia "Fleiss' kappa"
    assert k == pytest.approx(sm_fleiss(np.array(FLEISS_1971)), abs=1e-12)  # statsmodels
    assert k.recipe.text() == "kappa|fleiss|raters=14|n=10|v0.1.0"
    assert k.interpretation == "fair"


@pytest.mark.parametrize("level,published", [("nominal", 0.743), ("ordinal", 0.815),
                                             ("interval", 0.849)])
def test_krippendorff_2011_worked_example(level, published):
    a = krippendorff_alpha(K2011, level=level)
    assert round(a, 3) == published  # Krippendorff (2011), from memory
    ref = krippendorff.alpha(reliability_data=K2011, level_of_measurement=level)
    assert a == pytest.approx(ref, abs=1e-9)  # krippendorff package


def test_alpha_accepts_none_and_strings():
    rows = [[None if np.isnan(x) else f"c{int(x)}" for x in r] for r in K2011]
    assert krippendorff_alpha(rows) == pytest.approx(
        krippendorff.alpha(reliability_data=K2011, level_of_measurement="nominal"), abs=1e-12)


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(2, 6), st.integers(2, 40), st.integers(2, 6),
       st.floats(0.0, 0.6), st.sampled_from(["nominal", "ordinal", "interval"]))
def test_alpha_matches_krippendorff_package(seed, raters, units, cats, missing, level):
    rng = np.random.default_rng(seed)
    skew = rng.dirichlet(np.full(cats, 0.5))
    data = rng.choice(cats, size=(raters, units), p=skew).astype(float) * 1.5
    data[rng.random(data.shape) < missing] = np.nan
    pairable = (~np.isnan(data)).sum(axis=0) >= 2
    values = np.unique(data[:, pairable][~np.isnan(data[:, pairable])])
    if len(values) < 2:  # the package raises on one value; ours is tested separately
        return
    ref = krippendorff.alpha(reliability_data=data, level_of_measurement=level)
    assert krippendorff_alpha(data, level=level) == pytest.approx(ref, abs=1e-9)  # krippendorff


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(1, 60), st.integers(2, 6),
       st.sampled_from([None, "linear", "quadratic"]))
def test_cohen_matches_sklearn(seed, n, cats, weights):
    rng = np.random.default_rng(seed)
    a = rng.integers(0, cats, n)
    b = np.where(rng.random(n) < 0.5, a, rng.integers(0, cats, n))
    labels = list(range(cats))
    ref = cohen_kappa_score(a, b, weights=weights, labels=labels)  # scikit-learn
    ours = cohen_kappa(a, b, weights=weights, labels=labels)
    if np.isnan(ref):  # sklearn divides 0/0 when both raters are constant and equal
        assert ours == 1.0 and "one category" in ours.recipe.note
    else:
        assert ours == pytest.approx(ref, abs=1e-9)


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(1, 80), st.integers(2, 7), st.integers(2, 6))
def test_fleiss_matches_statsmodels(seed, items, raters, cats):
    rng = np.random.default_rng(seed)
    p = rng.dirichlet(np.full(cats, 0.7))
    table = np.stack([rng.multinomial(raters, p) for _ in range(items)])
    ref = sm_fleiss(table)  # statsmodels
    if np.isnan(ref):
        assert fleiss_kappa(table) == 1.0
    else:
        assert fleiss_kappa(table) == pytest.approx(ref, abs=1e-9)


def test_fleiss_equals_alpha_bias_free_relation():
    # With no missing data, n = N*m, nominal alpha = kappa_Fleiss + (1 - kappa)/(N*m)
    # (Krippendorff 2011, relation to Fleiss' kappa; our derivation, checked numerically).
    t = np.array(FLEISS_1971)
    rows = [sum(([j] * int(c) for j, c in enumerate(r)), []) for r in t]
    data = np.array(rows).T
    k, a = fleiss_kappa(t), krippendorff_alpha(data)
    n = t.sum()
    assert a == pytest.approx(k + (1 - k) / n, abs=1e-12)


# -- degenerate input: our documented answers ---------------------------------------------------
def test_one_category_only():
    assert cohen_kappa(["x"] * 5, ["x"] * 5) == 1.0
    assert cohen_kappa(["x"] * 5, ["x"] * 5, weights="quadratic", labels=["x", "y"]) == 1.0
    assert fleiss_kappa([[3, 0], [3, 0]]) == 1.0
    a = krippendorff_alpha([[1, 1, 1], [1, 1, None]])
    assert a == 1.0 and "one category" in a.recipe.note


def test_perfect_agreement_and_single_item():
    assert cohen_kappa([1, 2, 3], [1, 2, 3]) == 1.0
    assert krippendorff_alpha([[1, 2, 3], [1, 2, 3]]) == 1.0
    assert cohen_kappa(["x"], ["y"]) == 0.0  # p_o = 0, p_e = 0
    assert cohen_kappa(["x"], ["x"]) == 1.0
    # one item, three raters split 2-1 over two categories: P = 1/3, Pe = 5/9 (by hand)
    assert fleiss_kappa([[2, 1]]) == pytest.approx((1 / 3 - 5 / 9) / (1 - 5 / 9))
    assert fleiss_kappa([[2, 1]]) == pytest.approx(sm_fleiss(np.array([[2, 1]])))  # statsmodels
    # a single unit with two different values: observed = expected disagreement, alpha 0
    assert krippendorff_alpha([[1], [2]]) == 0.0
    assert krippendorff.alpha(reliability_data=[[1], [2]], level_of_measurement="nominal") == 0.0


def test_everything_missing():
    k = cohen_kappa([None, None], [1, None])
    assert np.isnan(k) and k.recipe.n_items == 0
    a = krippendorff_alpha([[np.nan, 1.0], [2.0, np.nan]])
    assert np.isnan(a) and "no unit" in a.recipe.note
    assert np.isnan(observed_agreement([None], [None]))


def test_missing_pairs_dropped_and_confusion():
    c, labels = confusion_matrix(["x", "y", None, "y"], ["x", "x", "y", "y"])
    assert labels == ["x", "y"]
    assert c.tolist() == [[1, 0], [1, 1]]
    assert observed_agreement(["x", "y", None, "y"], ["x", "x", "y", "y"]) == pytest.approx(2 / 3)


@pytest.mark.parametrize("call,message", [
    (lambda: cohen_kappa([1, 2], [1]), "same length"),
    (lambda: cohen_kappa([1, 2], [1, 3], labels=[1, 2]), "not among the declared labels"),
    (lambda: cohen_kappa([1, 2], [1, 2], weights="cubic"), "weights="),
    (lambda: cohen_kappa("ab", "ab"), "not a string"),
    (lambda: fleiss_kappa([[1, 2], [2, 2]]), "same number of ratings"),
    (lambda: fleiss_kappa([[1, 0], [1, 0]]), "at least 2 ratings"),
    (lambda: fleiss_kappa([[1.5, 0.5]]), "whole counts"),
    (lambda: fleiss_kappa([1, 2, 3]), "2-d"),
    (lambda: krippendorff_alpha([[1, 2]]), "at least 2 raters"),
    (lambda: krippendorff_alpha([[1, 2], [1]]), "same length"),
    (lambda: krippendorff_alpha([[1, 2], [1, 2]], level="ratio"), "level="),
    (lambda: krippendorff_alpha([["a", "b"], ["a", "b"]], level="interval"), "needs numbers"),
])
def test_bad_input_raises_clear_value_error(call, message):
    with pytest.raises(ValueError, match=message):
        call()


def test_pairwise_per_label_and_bootstrap_alpha():
    from clipscribe.agreement import bootstrap_alpha, pairwise_kappa, per_label_alpha

    rng = np.random.default_rng(5)
    data = rng.integers(0, 3, (3, 80))
    data[1, :40] = data[0, :40]
    pk = pairwise_kappa(data)
    assert set(pk) == {(0, 1), (0, 2), (1, 2)}
    assert pk[(0, 1)] == pytest.approx(cohen_kappa_score(data[0], data[1]), abs=1e-12)  # sklearn
    for lab, score in per_label_alpha(data).items():
        ref = krippendorff.alpha(reliability_data=(data == lab).astype(float),
                                 level_of_measurement="nominal")  # krippendorff, binarised
        assert score == pytest.approx(ref, abs=1e-12)
    value, ci = bootstrap_alpha(data, n_boot=500, seed=3)
    assert value == krippendorff_alpha(data) and ci.low < value < ci.high
    assert bootstrap_alpha(data, n_boot=500, seed=3)[1] == ci  # seeded
    assert "n_boot=500" in value.recipe.text()
