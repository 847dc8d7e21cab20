"""Properties every label agreement function must have, checked across all of them at once."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clipscribe.agreement import (cohen_kappa, fleiss_kappa, krippendorff_alpha,
                                  observed_agreement)


def _fleiss(rows):
    cats = sorted({x for r in rows for x in r}, key=str)
    table = [[sum(r[i] == c for r in rows) for c in cats] for i in range(len(rows[0]))]
    return fleiss_kappa(table)


# each takes a list of raters' rating lists (same items) and returns one number
FUNCTIONS = {
    "cohen": lambda rows: cohen_kappa(rows[0], rows[1]),
    "cohen_linear": lambda rows: cohen_kappa(rows[0], rows[1], weights="linear"),
    "cohen_quadratic": lambda rows: cohen_kappa(rows[0], rows[1], weights="quadratic"),
    "observed": lambda rows: observed_agreement(rows[0], rows[1]),
    "fleiss": _fleiss,
    "alpha_nominal": lambda rows: krippendorff_alpha(rows),
    "alpha_ordinal": lambda rows: krippendorff_alpha(rows, level="ordinal"),
    "alpha_interval": lambda rows: krippendorff_alpha(rows, level="interval"),
}
NOMINAL = ["cohen", "observed", "fleiss", "alpha_nominal"]

ratings = st.integers(2, 30).flatmap(
    lambda n: st.lists(st.lists(st.integers(0, 4), min_size=n, max_size=n), min_size=2,
                       max_size=2))


@pytest.mark.parametrize("name", FUNCTIONS)
@settings(max_examples=25, deadline=None)
@given(rows=ratings)
def test_symmetric_in_raters(name, rows):
    f = FUNCTIONS[name]
    assert f(rows) == pytest.approx(f(rows[::-1]), abs=1e-12, nan_ok=True)


@pytest.mark.parametrize("name", FUNCTIONS)
@settings(max_examples=25, deadline=None)
@given(rows=ratings)
def test_self_agreement_is_one(name, rows):
    assert FUNCTIONS[name]([rows[0], list(rows[0])]) == 1.0


@pytest.mark.parametrize("name", NOMINAL)
@settings(max_examples=25, deadline=None)
@given(rows=ratings, perm=st.permutations(range(5)))
def test_nominal_invariant_to_renaming(name, rows, perm):
    names = [f"label-{p}" for p in perm]
    renamed = [[names[x] for x in r] for r in rows]
    f = FUNCTIONS[name]
    assert f(renamed) == pytest.approx(f(rows), abs=1e-12)


@settings(max_examples=25, deadline=None)
@given(rows=ratings, perm=st.permutations(range(5)))
def test_unweighted_kappa_ignores_label_order(rows, perm):
    a, b = rows
    assert cohen_kappa(a, b, labels=list(perm)) == pytest.approx(cohen_kappa(a, b), abs=1e-12)


@settings(max_examples=25, deadline=None)
@given(rows=ratings, perm=st.permutations(range(5)))
def test_item_order_does_not_matter(rows, perm):
    order = np.random.default_rng(perm[0]).permutation(len(rows[0]))
    shuffled = [[r[i] for i in order] for r in rows]
    for f in FUNCTIONS.values():
        assert f(shuffled) == pytest.approx(f(rows), abs=1e-12, nan_ok=True)


@pytest.mark.parametrize("name", FUNCTIONS)
def test_bounded_above_by_one(name):
    rng = np.random.default_rng(0)
    for _ in range(20):
        rows = rng.integers(0, 4, (2, 15)).tolist()
        v = FUNCTIONS[name](rows)
        assert v <= 1.0 + 1e-12 and v.recipe.version
