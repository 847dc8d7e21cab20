"""Near-duplicate fingerprint search: the multi-index hash finds exactly the brute-force pairs."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clipscribe.export import near_pairs, near_pairs_brute
from clipscribe.export.neardup import as_uint64, chunk_plan


def _codes(n: int, radius: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    codes = rng.integers(0, 2**64, n, dtype=np.uint64, endpoint=False)
    # plant pairs at distances around the radius (some inside, some just outside)
    for src, dst in rng.integers(0, n, (n // 20, 2)):
        x = int(codes[src])
        for b in rng.choice(64, rng.integers(0, radius + 3), replace=False):
            x ^= 1 << int(b)
        codes[dst] = x
    return codes


def test_brute_force_reference_matches_python_bit_count():
    # Independent reference: int.bit_count (Python 3.10+ standard library) over every pair.
    codes = _codes(150, 8, seed=1)
    ints = [int(c) for c in codes]
    want = [(i, j, (ints[i] ^ ints[j]).bit_count()) for i in range(150) for j in range(i + 1, 150)
            if (ints[i] ^ ints[j]).bit_count() <= 8]
    i, j, d = near_pairs_brute(codes, 8)
    assert list(zip(i.tolist(), j.tolist(), d.tolist())) == want
    assert len(want) > 0


@pytest.mark.parametrize("radius", [0, 1, 3, 8, 12, 20])
@pytest.mark.parametrize("seed", [0, 1])
def test_index_equals_brute_force(radius, seed):
    codes = _codes(3_000, radius, seed)
    got = near_pairs(codes, radius)
    want = near_pairs_brute(codes, radius)
    assert len(want[0]) > 10
    for g, w in zip(got, want):
        np.testing.assert_array_equal(g, w)


def test_queries_restrict_to_pairs_touching_them():
    codes = _codes(2_000, 8, seed=3)
    q = np.arange(0, 2_000, 3)
    i, j, _ = near_pairs(codes, 8, queries=q)
    bi, bj, _ = near_pairs_brute(codes, 8)
    qs = set(q.tolist())
    want = [(a, b) for a, b in zip(bi.tolist(), bj.tolist()) if a in qs or b in qs]
    assert list(zip(i.tolist(), j.tolist())) == want


@pytest.mark.parametrize("radius", range(0, 20))
@pytest.mark.parametrize("m", [3, 4, 5, 9])
def test_chunk_plan_satisfies_pigeonhole(radius, m):
    plan = chunk_plan(radius, m)
    assert sum(w for _, w, _ in plan) == 64
    assert sum(r + 1 for *_, r in plan if r >= 0) >= radius + 1


def test_signed_and_unsigned_ints_are_the_same_code():
    assert as_uint64([-1, 2**64 - 1, 5]).tolist() == [2**64 - 1, 2**64 - 1, 5]


def test_radius_out_of_range_rejected():
    with pytest.raises(ValueError):
        near_pairs(np.zeros(3, dtype=np.uint64), 64)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.integers(0, 2**64 - 1), min_size=0, max_size=60), st.integers(0, 16),
       st.lists(st.tuples(st.integers(0, 59), st.integers(0, 2**64 - 1)), max_size=30))
def test_index_equals_brute_force_property(values, radius, near):
    # near-copies: value i with a few bits of noise kept under the radius most of the time
    values = values + [values[i % len(values)] ^ (noise & (noise >> 7) & (noise >> 13))
                       for i, noise in near] if values else values
    codes = np.array(values, dtype=np.uint64)
    for g, w in zip(near_pairs(codes, radius), near_pairs_brute(codes, radius)):
        np.testing.assert_array_equal(g, w)
