"""Near sets joined through the keys of what they share: the same components as every near
pair found by brute force, on random sets, with texts too long for keys, when keys collide, and
on look-alike captions whose clusters are known by construction."""

from __future__ import annotations

import itertools
import random

import numpy as np
import pytest

from clipscribe.export import corekeys
from clipscribe.export.clusters import components_brute
from clipscribe.export.corekeys import allowance, core_join
from clipscribe.export.textdup import caption_clusters, jaccard, shingles

from .synth import same_partition


def _all_pairs(sets: list[frozenset], threshold: float) -> tuple[np.ndarray, int]:
    """Reference: components of every pair with Jaccard >= threshold, and the number of pairs."""
    pairs = [(i, j) for i, j in itertools.combinations(range(len(sets)), 2)
             if jaccard(sets[i], sets[j]) + 1e-12 >= threshold]
    return components_brute(len(sets), [i for i, _ in pairs], [j for _, j in pairs]), len(pairs)


def _table(sets: list[frozenset]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    ids: dict = {}
    size = np.array([len(s) for s in sets], dtype=np.int64)
    members = np.array([ids.setdefault(x, len(ids)) for s in sets for x in sorted(s)],
                       dtype=np.int64)
    return np.cumsum(size) - size, size, members


def _random_sets(seed: int, n_bases: int = 90, largest: int = 12) -> list[frozenset]:
    """Random sets and variants of them with a member or two dropped or added."""
    rng = random.Random(seed)
    bases = [frozenset(rng.sample(range(40), rng.randint(1, largest))) for _ in range(n_bases)]
    out = set(bases)
    for b in bases:
        for _ in range(3):
            s = set(b)
            for _ in range(rng.randint(1, 2)):
                if len(s) > 1 and rng.random() < 0.5:
                    s.discard(rng.choice(sorted(s)))
                else:
                    s.add(rng.randrange(40))
            out.add(frozenset(s))
    return sorted(out, key=sorted)


@pytest.mark.parametrize("threshold", [0.25, 0.5, 0.8, 0.9, 0.95, 1.0])
def test_allowance_is_the_most_members_outside_the_shared_part(threshold):
    m = allowance(threshold, 60)
    assert m[0] == -1
    for k in range(1, 61):
        assert [s for s in range(200) if k / (k + s) + 1e-12 >= threshold] == list(range(m[k] + 1))


# the largest base set at each threshold whose variants (two members more) still need at most
# KEY_CAP keys
@pytest.mark.parametrize("threshold,largest", [(0.3, 7), (0.5, 7), (0.7, 10), (0.8, 12),
                                               (0.9, 22), (1.0, 22)])
@pytest.mark.parametrize("seed", [0, 1])
def test_keys_join_exactly_the_components_of_every_near_pair(threshold, largest, seed):
    sets = _random_sets(seed, largest=largest)
    want, n_pairs = _all_pairs(sets, threshold)
    got = core_join(*_table(sets), threshold)
    assert len(got.long) == 0
    assert np.array_equal(got.parent, want)
    # the links are a spanning forest of near pairs
    assert len(got.link_a) == len(sets) - len(np.unique(want))
    assert all(jaccard(sets[a], sets[b]) + 1e-12 >= threshold
               for a, b in zip(got.link_a.tolist(), got.link_b.tolist()))
    assert n_pairs > len(sets) // 2 or threshold >= 0.9


def test_sets_not_listed_or_needing_more_keys_than_the_cap_are_left_out_as_long():
    sets = _random_sets(3, largest=14)
    sizes = np.array([len(s) for s in sets])
    listed = np.arange(len(sets)) % 3 > 0
    got = core_join(*_table(sets), 0.5, listed=listed)
    # a set of s members has at most 2**s keys: up to nine members it is never over the cap;
    # at 0.5 a set of ten may lose up to five members: 638 keys
    over = sizes >= 10
    assert over.any() and np.array_equal(got.long, np.flatnonzero(~listed | over))
    assert np.array_equal(got.parent[got.long], got.long)  # never joined through keys


def _camera_captions(cameras: int, tails: int, seed: int) -> tuple[list[str], list[tuple]]:
    """Captions of fixed cameras and the cluster each belongs to by construction.

    A camera's captions are its sentence of 20 words of its own plus tail words. Sentence + one
    tail: 18 of 20 shingles shared with any other such caption (Jaccard 0.9). Sentence + tail x
    + a second word: Jaccard 0.95 with sentence + x, 0.905 with another second word after x,
    at most 0.86 with anything else. Tails without a one-tail caption (orphans) therefore form
    clusters of their own."""
    rng = random.Random(seed)
    texts, truth = [], []
    for c in range(cameras):
        sentence = " ".join(f"w{c}x{k}" for k in range(20))
        xs = rng.sample(range(4 * tails), tails + 5)
        singles, orphans = xs[:tails], xs[tails:]
        for x in singles:
            texts.append(f"{sentence} t{x}")
            truth.append((c, -1))
        for x in singles + orphans:
            for y in range(3):
                texts.append(f"{sentence} t{x} u{y}")
                truth.append((c, -1) if x in singles else (c, x))
    return texts, truth


@pytest.mark.parametrize("tails,method", [(20, "keys"), (60, "keys"), (150, "auto")])
def test_look_alike_captions_form_the_clusters_known_by_construction(tails, method):
    texts, truth = _camera_captions(4, tails, seed=tails)
    label = np.array([hash(t) for t in truth])
    cl = caption_clusters(texts, 0.9, method=method)
    assert same_partition(cl.label, label)
    assert len(cl.groups()) == 4 * (1 + 5)
    assert len(cl.link_a) == len(texts) - 24 and np.all(1.0 - cl.link_d + 1e-12 >= 0.9)
    # the work is the keys, at most 21 a caption, however many captions look alike (the
    # one-tail captions alone are tails * (tails - 1) / 2 near pairs per camera); with many
    # look-alikes per camera "auto" takes keys too: a query would examine the whole camera
    assert cl.queries == 0 and cl.work <= 21 * len(texts)
    if tails == 20:
        want, _ = _all_pairs([shingles(t) for t in texts], 0.9)
        assert np.array_equal(cl.label, want)
        assert np.array_equal(caption_clusters(texts, 0.9, method="cover").label, want)


def _with_long_texts(seed: int) -> list[str]:
    """Short look-alike captions, and a few families of 40-word captions (each shortened by
    one to three words), too long for keys at 0.9."""
    rng = random.Random(seed)
    texts, _ = _camera_captions(3, 15, seed)
    vocab = [f"v{k}" for k in range(30)]
    for _ in range(4):
        words = [rng.choice(vocab) for _ in range(40)]
        texts += [" ".join(words[:40 - k]) for k in range(4)]
    return sorted(set(texts))


def test_texts_too_long_for_keys_are_asked_through_the_index():
    texts = _with_long_texts(5)
    want, _ = _all_pairs([shingles(t) for t in texts], 0.9)
    cl = caption_clusters(texts, 0.9, method="keys")
    assert np.array_equal(cl.label, want)
    # asked one by one: the 40-, 39- and 38-word texts, which would need 631 keys or more; a
    # 37-word text (35 shingles) needs only its 36 keys of at most one deletion, as no text has
    # 33 or 34 shingles
    assert cl.queries == 12
    assert 0 < cl.work <= 21 * (len(texts) - 16) + 4 * 36
    assert np.array_equal(caption_clusters(texts, 0.9).label, want)  # whichever "auto" takes
    assert len(cl.link_a) == len(texts) - len(np.unique(want))


def test_colliding_keys_fall_back_to_the_leader_cover_and_stay_exact(monkeypatch):
    texts = _with_long_texts(6)
    want, _ = _all_pairs([shingles(t) for t in texts], 0.9)

    def equal_values(n_members, n_sizes, seed):  # every key of one size collides
        return np.zeros(n_members, dtype=np.uint64), np.zeros(n_sizes, dtype=np.uint64)

    monkeypatch.setattr(corekeys, "key_values", equal_values)
    sets = [shingles(t) for t in texts]
    joined = core_join(*_table(sets), 0.9)
    assert any(jaccard(sets[a], sets[b]) < 0.9
               for a, b in zip(joined.link_a.tolist(), joined.link_b.tolist()))
    cl = caption_clusters(texts, 0.9, method="keys")
    assert np.array_equal(cl.label, want)
    assert cl.queries > 12  # the leader cover asked the index


def _star_edges_plain(key, text, size, m):
    """Reference for corekeys._star_edges: every entry sorted and gathered, none dropped first
    (entries grouped by the hashed part of their key; the centre is the group's first entry in
    listed order; every other entry within the bound gets an edge from it)."""
    order = np.argsort(key, kind="stable")
    key, text = key[order], text[order]
    dele = (key & np.uint64((1 << corekeys._D_BITS) - 1)).astype(np.int64)
    hashed = key >> np.uint64(corekeys._D_BITS)
    start = np.r_[True, hashed[1:] != hashed[:-1]]
    centre = np.flatnonzero(start)[np.cumsum(start) - 1]
    k = size[text[centre]] - dele[centre]
    ok = ~start & (dele <= m[k] - dele[centre])
    return text[centre[ok]], text[ok]


@pytest.mark.parametrize("seed", range(4))
def test_star_edges_equal_the_edges_of_every_entry_sorted(seed):
    rng = np.random.default_rng(seed)
    n_sets, n_keys = 60, 4000
    size = rng.integers(3, 30, n_sets)
    m = allowance(0.8, 40)
    # keys listed once among hashed values shared by several sets, with equal keys too
    hashed = np.where(rng.random(n_keys) < 0.5, rng.integers(0, 40, n_keys),
                      rng.integers(1000, 2**40, n_keys)).astype(np.uint64)
    key = (hashed << np.uint64(corekeys._D_BITS)) | rng.integers(0, 3, n_keys).astype(np.uint64)
    text = rng.integers(0, n_sets, n_keys)
    a, b = corekeys._star_edges(key, text, size, m)
    want_a, want_b = _star_edges_plain(key, text, size, m)
    assert len(want_a) > 100
    assert a.tolist() == want_a.tolist() and b.tolist() == want_b.tolist()


def _star_edges_python(key, text, size, m):
    """Pure-Python reference: entries ordered by key with ties in listed order (``sorted`` is
    stable, Python documentation "Sorting Techniques"); each group of one hashed value is led
    by its first entry; every other entry within the bound gets an edge from it."""
    bits = corekeys._D_BITS
    order = sorted(range(len(key)), key=lambda i: int(key[i]))
    a, b = [], []
    centre = None
    for j, i in enumerate(order):
        if j == 0 or int(key[i]) >> bits != int(key[order[j - 1]]) >> bits:
            centre = i
            continue
        d_c, d_i = int(key[centre]) & ((1 << bits) - 1), int(key[i]) & ((1 << bits) - 1)
        if d_i <= m[size[text[centre]] - d_c] - d_c:
            a.append(int(text[centre]))
            b.append(int(text[i]))
    return a, b


def test_star_edges_break_ties_in_listed_order():
    # many entries share one key (as at 100k clips, where ~520k entries are tied): the centre
    # of each key must be the first listed, so the edges do not depend on numpy's sort kernel
    rng = np.random.default_rng(7)
    n_sets, n_keys = 50, 3000
    size = rng.integers(3, 20, n_sets)
    m = allowance(0.8, 30)
    hashed = rng.integers(0, 12, n_keys).astype(np.uint64)
    key = (hashed << np.uint64(corekeys._D_BITS)) | rng.integers(0, 2, n_keys).astype(np.uint64)
    text = rng.permutation(np.resize(np.arange(n_sets), n_keys))
    a, b = corekeys._star_edges(key, text, size, m)
    want_a, want_b = _star_edges_python(key, text, size, m)
    assert len(want_a) > 1000
    assert a.tolist() == want_a and b.tolist() == want_b
    # a different tie order gives different edges, so the check above can fail
    flip = np.argsort(key, kind="stable")[::-1]
    assert corekeys._star_edges(key[flip], text[flip], size, m)[0].tolist() != want_a


def test_star_edges_of_keys_listed_once_are_none():
    key = np.arange(10, dtype=np.uint64) << np.uint64(corekeys._D_BITS)
    a, b = corekeys._star_edges(key, np.arange(10), np.full(10, 5), allowance(0.9, 10))
    assert len(a) == len(b) == 0


@pytest.mark.parametrize("seed,block", [(0, 1 << 20), (1, 7), (2, 1000)])
def test_shared_entries_are_the_values_listed_more_than_once(monkeypatch, seed, block):
    # reference: collections.Counter over the values; many values agree in their low bits
    # (the bit table's index), so the table passes entries the binary search must reject
    from collections import Counter
    rng = np.random.default_rng(seed)
    low = rng.integers(0, 64, 5000).astype(np.uint64)
    high = rng.integers(0, 800, 5000).astype(np.uint64) << np.uint64(40)
    values = high | low
    count = Counter(values.tolist())
    want = [i for i, v in enumerate(values.tolist()) if count[v] > 1]
    # the values as keys (three low bits of other data), looked at in blocks of a few keys
    monkeypatch.setattr(corekeys, "BLOCK", block)
    keys = (values << np.uint64(3)) | rng.integers(0, 8, 5000).astype(np.uint64)
    at = np.arange(5000)
    got_key, got_at = corekeys._shared_entries([(keys[:3000], at[:3000]), (keys[3000:], at[3000:])],
                                               np.uint64(3))
    assert 100 < len(want) < 4000 and got_at.tolist() == want
    assert got_key.tolist() == keys[want].tolist()
    alone = [(np.arange(5, dtype=np.uint64), np.arange(5))]
    assert corekeys._shared_entries(alone, np.uint64(0))[1].tolist() == []
