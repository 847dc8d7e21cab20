"""Near sets joined through the part they share, without listing pairs.

Two sets ``x`` and ``y`` share ``K = x ∩ y``; with ``d_x = |x| - |K|`` and ``d_y = |y| - |K|``
their Jaccard similarity is ``|K| / (|K| + d_x + d_y)``. So they are near (Jaccard >= t)
exactly when ``d_x + d_y <= m(|K|)``, where ``m(k)`` is the largest ``s`` with
``k / (k + s) >= t``. It follows that ``d_x <= m(|x| - d_x)``: a set can only lose a few of its
members on the way to what it shares with a near set.

Each set lists as *keys* the subsets left after deleting ``d`` of its members, for every ``d``
that can occur in a near pair (``d <= m(|x| - d)``, and some set has a size that could be the
partner: ``|K| <= size <= |K| + m(|K|) - d``). A key is the sum of random 64-bit values of its
members, plus a value for its size. Among the sets listing one key ``K``, the one with the
fewest deletions ``d0`` is near every one with ``d <= m(|K|) - d0`` (they share at least ``K``);
these star edges are the only pairs the key vouches for. Every near pair meets in the key
``x ∩ y``, where both are within that bound of the star's centre, so union-find over the star
edges yields the connected components of the near graph: exact, without comparing any pair.
Only a collision of two different subsets' sums could join far sets; the caller checks the
links exactly (one per joined item), which makes the result exact whatever the hashes.

The work is the number of keys, the sum over sets of ``C(|x|, d)`` for the allowed ``d``: it
does not grow with how many sets look alike. At the usual caption threshold 0.9 the word
3-grams of a caption of fewer than 12 words have one key, up to 21 words at most 20, up to 31
words at most 436. Sets that would need more than ``KEY_CAP`` keys (longer texts, or lower
thresholds) are left to the caller, listed as *long*.

Written here with numpy sorts and sums: the libraries that group near sets (MinHash banding)
are approximate, and this needs no more than the shingle table already built.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import combinations
from math import comb

import numpy as np

from .clusters import union
from .ranks import BLOCK

#: keys one set may list; a set needing more is *long* and left to the caller
KEY_CAP = 512
_PASS_KEYS = 1 << 23  # keys sorted at once (about 30 bytes each while sorting)
_GATHER = 1 << 20  # deleted members gathered at once while making keys
_D_BITS = 6  # the deletion count rides in the low bits of the sorted key (KEY_CAP keeps d < 10)
_SET = np.int32  # set numbers of the keys (half the memory of int64; sets are texts, < 2**31)


@dataclass(frozen=True)
class CoreJoin:
    """Result of :func:`core_join`: the union-find ``parent`` (roots are the smallest item),
    the links that joined clusters (``link_a``, ``link_b``; not yet checked), the *long* sets
    that listed no keys, and the number of keys listed."""

    parent: np.ndarray
    link_a: np.ndarray
    link_b: np.ndarray
    long: np.ndarray
    keys: int


def allowance(threshold: float, largest: int) -> np.ndarray:
    """``m[k]`` for ``k = 0..largest``: the most members two sets sharing ``k`` may hold
    outside it together and still have Jaccard >= threshold (``-1`` for ``k = 0``)."""
    m = np.full(largest + 1, -1, dtype=np.int64)
    for k in range(1, largest + 1):
        s = int(k * (1.0 - threshold) / threshold)
        while k / (k + s + 1) + 1e-12 >= threshold:
            s += 1
        while s > 0 and k / (k + s) + 1e-12 < threshold:
            s -= 1
        m[k] = s
    return m


def key_values(n_members: int, n_sizes: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Random 64-bit values of the members and of the key sizes ``0..n_sizes - 1``."""
    rng = np.random.default_rng(seed)
    return (rng.integers(0, 2**64, n_members, dtype=np.uint64),
            rng.integers(0, 2**64, n_sizes, dtype=np.uint64))


def deletion_plan(sizes: np.ndarray, m: np.ndarray) -> dict[int, list[int]]:
    """Per set size present: the deletion counts its keys need (see the module docstring)."""
    largest = len(m) - 1
    have = np.zeros(largest + 2, dtype=np.int64)
    np.add.at(have, np.asarray(sizes) + 1, 1)
    below = np.cumsum(have)  # below[k]: sets of size < k

    def partner(lo: int, hi: int) -> bool:
        hi = min(hi, largest)
        return hi >= lo and below[hi + 1] - below[lo] > 0

    plan: dict[int, list[int]] = {}
    for s in np.unique(sizes).tolist():
        ds = []
        for d in range(s):
            k = s - d
            if d > m[k]:
                break  # m never rises as k falls, so no larger d is allowed either
            if partner(k, k + int(m[k]) - d):
                ds.append(d)
        plan[s] = ds
    return plan


def key_counts(size: np.ndarray, threshold: float) -> np.ndarray:
    """How many keys each set lists (sets of sizes ``size``, the module docstring's rule)."""
    m = allowance(threshold, int(size.max()))
    count = {s: min(sum(comb(s, d) for d in ds), 2**40)
             for s, ds in deletion_plan(size, m).items()}
    return np.array([count[s] for s in size.tolist()], dtype=np.int64)


def core_join(first: np.ndarray, size: np.ndarray, members: np.ndarray, threshold: float, *,
              seed: int = 0, listed: np.ndarray | None = None) -> CoreJoin:
    """Join near sets through their shared keys (method in the module docstring).

    Parameters
    ----------
    first, size : int arrays, shape (n,)
        Set ``i`` is ``members[first[i]:first[i] + size[i]]`` (distinct ids, ``size >= 1``).
    members : int array
        Member ids (e.g. shingle ids), ``0..max``.
    threshold : float
        Jaccard threshold in (0, 1].
    seed : int
        Fixes the random values of the keys.
    listed : bool array, shape (n,), optional
        The sets that may list keys (by default all); those not listed, or needing more than
        ``KEY_CAP`` keys, are returned as ``long``: their near pairs are for the caller to find.
    """
    n = len(size)
    if n == 0:
        empty = np.empty(0, dtype=np.int64)
        return CoreJoin(parent=empty, link_a=empty, link_b=empty, long=empty, keys=0)
    m = allowance(threshold, int(size.max()))
    plan = deletion_plan(size, m)
    is_long = key_counts(size, threshold) > KEY_CAP
    if listed is not None:
        is_long |= ~np.asarray(listed, dtype=bool)
    value, salt = key_values(int(members.max()) + 1, len(m), seed)
    whole = np.add.reduceat(value[members], first)
    groups = []  # (size, the sets of that size, deletions, which members each key deletes)
    total = 0
    for s, ds in plan.items():
        texts = np.flatnonzero((size == s) & ~is_long)
        if not len(texts):
            continue
        for d in ds:
            combos = np.array(list(combinations(range(s), d)), dtype=np.int64)
            combos = combos.reshape(comb(s, d), d)
            groups.append((s, texts, d, combos))
            total += len(texts) * len(combos)
    passes = max(1, -(-total // _PASS_KEYS))
    parent = np.arange(n, dtype=np.int64)
    links: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    by_pass = _keys(groups, first, members, value, salt, whole, passes)
    for p in range(passes):
        a, b = _star_edges_of(by_pass[p], size, m)
        by_pass[p] = []  # its keys are done with
        parent = union(parent, a, b, np.zeros(len(a)), links)
    if links:
        la, lb = (np.concatenate(x) for x in list(zip(*links))[:2])
    else:
        la = lb = np.empty(0, dtype=np.int64)
    return CoreJoin(parent, la, lb, np.flatnonzero(is_long), total)


def _keys(groups, first, members, value, salt, whole, passes: int) -> list[list]:
    """Keys of every group, computed once and dealt to ``passes`` passes by their value:
    per pass, parts ``(key with the deletion count in its low bits, set)`` in listed order."""
    by_pass: list[list] = [[] for _ in range(passes)]
    low = np.uint64((1 << _D_BITS) - 1)
    for s, texts_s, d, combos in groups:
        rows = max(1, _GATHER // max(1, len(combos) * max(d, 1)))
        for at in range(0, len(texts_s), rows):
            t = texts_s[at:at + rows]
            k = whole[t][:, None] + salt[s - d]
            if d:
                gone = value[members[first[t][:, None, None] + combos[None]]]
                k = k - gone.sum(axis=2, dtype=np.uint64)
            k = k.ravel()
            tt = np.repeat(t.astype(_SET), len(combos))
            which = k % np.uint64(passes) if passes > 1 else None
            k &= ~low
            k |= np.uint64(d)
            if which is None:
                by_pass[0].append((k, tt))
                continue
            for p in range(passes):
                pick = which == np.uint64(p)
                by_pass[p].append((k[pick], tt[pick]))
    return by_pass


def _star_edges(key: np.ndarray, text: np.ndarray, size: np.ndarray,
                m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`_star_edges_of` the keys ``key`` listed by the sets ``text``."""
    return _star_edges_of([(key, text)], size, m)


def _star_edges_of(parts: list, size: np.ndarray, m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Edges from each key's centre (fewest deletions) to the sets within its bound; the keys
    are listed in ``parts``, ``(key, set)`` arrays in order.

    Most keys are listed once and give no edge (at 100k clips, 0.5M of 15M entries share their
    key with another): the entries of shared keys are picked out first, in listed order, and
    only they are sorted, stably (equal keys keep the order they were listed in), so which
    entry is a key's centre, hence the edges and the links a report shows, is the same on
    every machine whatever sort kernel numpy picks. Picking them out takes a plain sort of the
    hashed values and one look-up per entry in a table of the few shared ones, where a stable
    argsort of every entry costs several times more.
    """
    key, text = _shared_entries(parts, np.uint64(_D_BITS))
    if not len(key):
        return text, text
    order = np.argsort(key, kind="stable")
    key, text = key[order], text[order]
    hashed = key >> np.uint64(_D_BITS)
    start = np.r_[True, hashed[1:] != hashed[:-1]]
    dele = (key & np.uint64((1 << _D_BITS) - 1)).astype(np.int64)
    centre = np.flatnonzero(start)[np.cumsum(start) - 1]
    k = size[text[centre]] - dele[centre]
    ok = ~start & (dele <= m[k] - dele[centre])
    return text[centre[ok]], text[ok]


def _shared_entries(parts: list, shift: np.uint64) -> tuple[np.ndarray, np.ndarray]:
    """``(key, set)`` of the entries of ``parts`` whose value ``key >> shift`` (uint64) occurs
    more than once, in listed order (sets as int64).

    A bit table over the low bits of the repeated values passes every entry of them and few
    others (the values are random sums); a binary search settles those few. No array as long
    as all the keys is made but one sorted copy of the values."""
    none = np.empty(0, dtype=np.uint64), np.empty(0, dtype=np.int64)
    if not parts:
        return none
    sv = np.concatenate([k >> shift for k, _ in parts])
    sv.sort()
    repeated = sv[1:][sv[1:] == sv[:-1]]
    del sv
    if not len(repeated):
        return none
    repeated = repeated[np.r_[True, repeated[1:] != repeated[:-1]]]
    bits = min(max(len(repeated).bit_length() + 6, 10), 26)
    low = np.uint64((1 << bits) - 1)
    table = np.zeros(1 << bits, dtype=bool)
    table[repeated & low] = True
    keys, sets = [], []
    for key, text in parts:
        for at in range(0, len(key), BLOCK):
            value = key[at:at + BLOCK] >> shift
            maybe = np.flatnonzero(table[value & low])
            found = np.searchsorted(repeated, value[maybe])
            found[found == len(repeated)] = 0
            pick = maybe[repeated[found] == value[maybe]] + at
            keys.append(key[pick])
            sets.append(text[pick])
    return np.concatenate(keys), np.concatenate(sets).astype(np.int64)
