"""Near-duplicate search over 64-bit fingerprints by multi-index hashing.

Written here because no well-kept numpy-only library answers "all pairs within Hamming radius r"
over plain uint64 values; the method is the multi-index hashing of Norouzi, Punjani and Fleet,
"Fast Search in Hamming Space with Multi-Index Hashing", CVPR 2012, doi:10.1109/CVPR.2012.6248043.
"""

from __future__ import annotations

import math
from itertools import combinations
from typing import Sequence

import numpy as np

from .clusters import Clusters, cover_components

_MASK64 = (1 << 64) - 1
_MAX_TABLE_BITS = 22  # a dense bucket table of 2**22 int32 entries is 16 MiB


def as_uint64(fingerprints: Sequence[int]) -> np.ndarray:
    """Plain Python ints (signed or unsigned 64-bit) to a uint64 array."""
    return np.fromiter((int(f) & _MASK64 for f in fingerprints), dtype=np.uint64,
                       count=len(fingerprints))


def popcount(x: np.ndarray) -> np.ndarray:
    """Number of set bits of each uint64."""
    return np.bitwise_count(x)


def chunk_plan(radius: int, m: int) -> list[tuple[int, int, int]]:
    """Split 64 bits into ``m`` chunks ``(shift, width, sub_radius)``.

    By the pigeonhole principle, if two codes differ in at most ``radius`` bits and the chunk
    sub-radii satisfy :math:`\\sum_j (r_j + 1) \\ge r + 1`, some chunk :math:`j` differs in at most
    :math:`r_j` bits (Norouzi et al. 2012, Proposition 1, generalised to unequal sub-radii).
    With ``m = radius + 1`` every sub-radius is 0: the pair agrees exactly on some chunk.
    """
    base, extra = divmod(64, m)
    widths = [base + (1 if j < extra else 0) for j in range(m)]
    q, rem = divmod(radius + 1, m)
    subs = [q - 1 + (1 if j < rem else 0) for j in range(m)]
    plan, shift = [], 0
    for w, r in zip(widths, subs):
        plan.append((shift, w, r))
        shift += w
    return plan


def _flip_masks(width: int, r: int) -> np.ndarray:
    masks = [0]
    for k in range(1, r + 1):
        masks += [sum(1 << b for b in bits) for bits in combinations(range(width), k)]
    return np.array(masks, dtype=np.int64)


def _choose_m(radius: int, n_index: int, n_query: int) -> int:
    # Cost model: one table lookup per query and flip mask, one check per candidate.
    best, best_cost = 0, float("inf")
    for m in range(3, max(3, radius + 1) + 1):
        cost = 0.0
        for _, w, r in chunk_plan(radius, m):
            if r < 0:
                continue
            v = sum(math.comb(w, k) for k in range(r + 1))
            cost += n_query * v * (1 + 2 * n_index / 2.0 ** w) + 2.0 ** w
        if cost < best_cost:
            best, best_cost = m, cost
    return best


class ChunkIndex:
    """Multi-index hash tables over ``codes`` for one radius (see :func:`near_pairs`).

    Each chunk of the codes is bucketed in a dense table (counts by ``np.bincount``, members by
    a stable argsort); a query looks up every chunk value within the chunk's sub-radius and the
    candidates are verified on all 64 bits.
    """

    def __init__(self, codes: np.ndarray, radius: int, n_query: int | None = None):
        if not 0 <= radius < 64:
            raise ValueError(f"radius must lie in [0, 63], got {radius}")
        self.codes = np.asarray(codes, dtype=np.uint64)
        self.radius = radius
        n = len(self.codes)
        self.tables = []
        for shift, width, sub in chunk_plan(radius, _choose_m(radius, n, n if n_query is None
                                                                 else n_query)):
            if sub < 0:
                continue
            keys = ((self.codes >> np.uint64(shift)) & np.uint64((1 << width) - 1)).astype(np.int64)
            counts = np.bincount(keys, minlength=1 << width)
            starts = np.concatenate(([0], np.cumsum(counts)[:-1]))
            self.tables.append((keys, counts, starts, np.argsort(keys, kind="stable"),
                                _flip_masks(width, sub)))

    def candidates(self, q_idx: np.ndarray, block: int = 1 << 21):
        """Yield ``(query, other)`` arrays: every indexed code sharing a probed bucket with a
        query (itself included), chunk by chunk, at most ``block`` probes at a time."""
        for keys, counts, starts, members, masks in self.tables:
            per_query = max(1, block // max(1, len(masks) * 4))
            for a in range(0, len(q_idx), per_query):
                q = q_idx[a:a + per_query]
                probe = (keys[q][:, None] ^ masks[None, :]).ravel()
                c = counts[probe]
                hit = c > 0
                probe, c = probe[hit], c[hit]
                total = int(c.sum())
                if total == 0:
                    continue
                qq = np.repeat(q, len(masks))[hit]
                run_start = np.repeat(np.cumsum(c) - c, c)
                pos = np.repeat(starts[probe], c) + (np.arange(total) - run_start)
                yield np.repeat(qq, c), members[pos]

    def neighbours(self, q_idx: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, int]:
        """``(query, other, distance, work)``: every code within the radius of each query
        (``other != query``, each pair once per query), and the candidates examined."""
        n = len(self.codes)
        found, work = [], 0
        for qi, other in self.candidates(np.asarray(q_idx, dtype=np.int64)):
            work += len(qi)
            keep = (qi != other) & (popcount(self.codes[qi] ^ self.codes[other]) <= self.radius)
            found.append(qi[keep] * n + other[keep])
        code = np.unique(np.concatenate(found)) if found else np.empty(0, dtype=np.int64)
        qi, other = code // n, code % n
        return qi, other, popcount(self.codes[qi] ^ self.codes[other]).astype(np.int64), work


def near_pairs(codes: np.ndarray, radius: int, *, queries: np.ndarray | None = None,
               block: int = 1 << 21) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """All pairs ``i < j`` with Hamming distance ``popcount(codes[i] ^ codes[j]) <= radius``.

    Each chunk of the codes is bucketed in a dense table (counts by ``np.bincount``, members by
    a stable argsort); each query looks up every chunk value within the chunk's sub-radius and
    the candidates are verified on all 64 bits. Exact: no pair within the radius is missed.
    The output grows with the square of a set of mutual look-alikes; :func:`near_clusters`
    does not.

    Parameters
    ----------
    codes : uint64 array, shape (n,)
    radius : int
        0..63.
    queries : int array, optional
        Only pairs with at least one member among these indices are returned (all when None).
    block : int
        Upper bound on candidates expanded at once (memory).

    Returns
    -------
    i, j, d : int arrays
        Pairs with ``i < j`` and their distances, sorted by ``(i, j)``.
    """
    codes = np.asarray(codes, dtype=np.uint64)
    n = len(codes)
    if not 0 <= radius < 64:
        raise ValueError(f"radius must lie in [0, 63], got {radius}")
    q_idx = np.arange(n) if queries is None else np.unique(np.asarray(queries, dtype=np.int64))
    empty = np.empty(0, dtype=np.int64)
    if n < 2 or len(q_idx) == 0:
        return empty, empty, empty
    found_i, found_j = [], []
    for qi, other in ChunkIndex(codes, radius, len(q_idx)).candidates(q_idx, block):
        keep = qi != other
        qi, other = qi[keep], other[keep]
        close = popcount(codes[qi] ^ codes[other]) <= radius
        qi, other = qi[close], other[close]
        found_i.append(np.minimum(qi, other))
        found_j.append(np.maximum(qi, other))
    if not found_i:
        return empty, empty, empty
    code = np.unique(np.concatenate(found_i) * n + np.concatenate(found_j))
    i, j = code // n, code % n
    return i, j, popcount(codes[i] ^ codes[j]).astype(np.int64)


def near_clusters(codes: np.ndarray, radius: int, *, seed: int = 0) -> Clusters:
    """Clusters of look-alike codes: connected components of "Hamming distance <= radius".

    Exact (the same components as joining every pair :func:`near_pairs` finds), but without
    listing the pairs: see :mod:`clipscribe.export.clusters`. Hamming distance is a metric, so
    leaders of two stars that could hold a near pair are within ``3 * radius`` of each other.

    Returns
    -------
    Clusters
        ``label`` per code and the links (near pairs forming a spanning forest, with their
        Hamming distances).
    """
    codes = np.asarray(codes, dtype=np.uint64)
    index = ChunkIndex(codes, radius)
    wide = min(3 * radius, 63)

    def wide_pairs(items: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        sub = codes[items]
        if wide >= 63 or len(items) <= 4096:
            i, j, _ = near_pairs_brute(sub, wide)
        else:
            i, j, _ = near_pairs(sub, wide)
        return items[i], items[j]

    def close(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        d = popcount(codes[a] ^ codes[b]).astype(np.int64)
        return d <= radius, d

    return cover_components(len(codes), index.neighbours, wide_pairs, close, radius=radius,
                            seed=seed)


def near_pairs_brute(codes: np.ndarray, radius: int, *,
                     block: int = 2048) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """All-pairs reference: the same answer as :func:`near_pairs` by checking every pair."""
    codes = np.asarray(codes, dtype=np.uint64)
    n = len(codes)
    out_i, out_j = [], []
    for a in range(0, n, block):
        d = popcount(codes[a:a + block, None] ^ codes[None, :])
        ii, jj = np.nonzero(d <= radius)
        ii = ii + a
        keep = ii < jj
        out_i.append(ii[keep])
        out_j.append(jj[keep])
    i = np.concatenate(out_i) if out_i else np.empty(0, dtype=np.int64)
    j = np.concatenate(out_j) if out_j else np.empty(0, dtype=np.int64)
    order = np.lexsort((j, i))
    i, j = i[order].astype(np.int64), j[order].astype(np.int64)
    return i, j, popcount(codes[i] ^ codes[j]).astype(np.int64)
