"""Clusters of look-alike items, found without listing every look-alike pair.

A *cluster* is a connected component of the "near" graph: items are the nodes, and two items are
joined when they are near (fingerprints within the Hamming radius, captions at or above the
Jaccard threshold). Nearness is not transitive, so a cluster may hold two items that are not
near each other but are joined by a chain of near pairs. This is the unit a split must keep
whole: no near pair crosses splits exactly when every cluster lies in one split.

The components are exact, yet the work grows with the number of items, not with the number of
near pairs (a fixed camera gives thousands of mutually near clips, so the pairs grow with the
square of the clips). The method:

1. *Cover.* Items are taken in a fixed pseudo-random order, in batches. Each item not yet
   covered asks the index for all its near items (exact), is linked to them, and those become
   *covered*: they are never asked themselves. A clique of k look-alikes costs one query of k
   candidates, not k queries. The batch size follows the work the previous batch cost (and at
   most doubles), so a batch of queries into large look-alike sets stays small.
2. *Stars.* An edge can only be missing between two covered items ``y`` and ``z``. Each covered
   item keeps the queried item (its *leader*) that covered it, within the threshold. When the
   distance is a metric (Hamming distance; Jaccard distance ``1 - J``), ``d(y, z) <= e`` gives
   ``d(leader(y), leader(z)) <= 3e`` by the triangle inequality. So only leaders within ``3e``
   of each other, whose clusters are still apart, have their covered items compared; one near
   pair between the two groups is enough to join them. Before pairs are formed, each star
   keeps only its items within ``2e`` of the other leader (a near ``z`` is within ``e`` of it):
   two look-alike sets that are merely close cost one distance per item, not one per pair.

Union-find is vectorised: every round hooks each root that has an edge to a smaller root onto
that root, one edge per hooked root, then compresses paths by pointer jumping. The edges used
to hook are the cluster's *links*: a spanning forest of real near pairs (one fewer than the
cluster's items), which is what a report shows as evidence.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

#: neighbours(queries) -> (query, other, distance, work): every item within the threshold of each
#: query (``other != query``), and the number of candidates examined
Neighbours = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, np.ndarray, int]]
#: wide_pairs(items) -> (a, b): a superset of the pairs among ``items`` within 3x the threshold
WidePairs = Callable[[np.ndarray], tuple[np.ndarray, np.ndarray]]
#: close(a, b) -> (near, distance) for the pairs ``(a[k], b[k])``
Close = Callable[[np.ndarray, np.ndarray], tuple[np.ndarray, np.ndarray]]

_FIRST_BATCH = 32
_MAX_BATCH = 1 << 14
_BATCH_WORK = 1 << 21  # candidates examined per batch of queries (memory and redundancy)
_STAR_WORK = 1 << 20  # pairs of covered items compared at once when joining stars


@dataclass(frozen=True)
class Clusters:
    """Connected components of the near graph over ``n`` items.

    ``label[i]`` is the smallest item of item ``i``'s cluster; ``link_a``, ``link_b``,
    ``link_d`` are the links (a spanning forest of near pairs, ``n - number of clusters`` of
    them) and their distances; ``queries`` counts the items that asked the index (the rest were
    covered by a near leader), ``work`` the candidates examined.
    """

    label: np.ndarray
    link_a: np.ndarray
    link_b: np.ndarray
    link_d: np.ndarray
    queries: int = 0
    work: int = 0

    def groups(self, min_size: int = 2) -> list[np.ndarray]:
        """The clusters of at least ``min_size`` items, each sorted, in order of first item."""
        order = np.argsort(self.label, kind="stable")
        lab = self.label[order]
        cut = np.flatnonzero(np.r_[True, lab[1:] != lab[:-1], True])
        return [order[a:b] for a, b in zip(cut[:-1], cut[1:]) if b - a >= min_size]

    def links_of(self) -> dict[int, list[tuple[int, int, float]]]:
        """Links per cluster label: ``label -> [(a, b, distance), ...]`` with ``a < b``."""
        out: dict[int, list[tuple[int, int, float]]] = {}
        a, b = np.minimum(self.link_a, self.link_b), np.maximum(self.link_a, self.link_b)
        for x, y, d in sorted(zip(a.tolist(), b.tolist(), self.link_d.tolist())):
            out.setdefault(int(self.label[x]), []).append((x, y, d))
        return out


def compress(parent: np.ndarray) -> np.ndarray:
    """Point every item straight at its root (pointer jumping)."""
    while True:
        up = parent[parent]
        if np.array_equal(up, parent):
            return parent
        parent = up


def union(parent: np.ndarray, a: np.ndarray, b: np.ndarray, d: np.ndarray,
          links: list[tuple[np.ndarray, np.ndarray, np.ndarray]]) -> np.ndarray:
    """Join the pairs ``(a[k], b[k])``; append the edges that joined two clusters to ``links``.

    Each round hooks every root that has an edge to a smaller root onto it through one such
    edge; hooks point from larger to smaller roots, so they never close a cycle.
    """
    while len(a):
        parent = compress(parent)
        ra, rb = parent[a], parent[b]
        apart = ra != rb
        a, b, d, ra, rb = a[apart], b[apart], d[apart], ra[apart], rb[apart]
        if not len(a):
            break
        hi = np.maximum(ra, rb)
        _, first = np.unique(hi, return_index=True)
        parent[hi[first]] = np.minimum(ra, rb)[first]
        links.append((a[first], b[first], d[first]))
    return compress(parent)


def cover_components(n: int, neighbours: Neighbours, wide_pairs: WidePairs, close: Close, *,
                     radius: float, seed: int = 0) -> Clusters:
    """Exact connected components of the near graph (method in the module docstring).

    Parameters
    ----------
    n : int
        Number of items (0..n-1).
    neighbours : callable
        Exact near items of a batch of queries.
    wide_pairs : callable
        Pairs among some items within three times the threshold (a superset is fine).
    close : callable
        Exact check of given pairs.
    radius : float
        The distance within which two items are near (as ``close`` measures it).
    seed : int
        Fixes the order in which items are asked (the links, not the clusters, depend on it).
    """
    parent = np.arange(n, dtype=np.int64)
    leader = np.full(n, -1, dtype=np.int64)  # covered item: a queried item near it
    asked = np.zeros(n, dtype=bool)
    links: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    order = np.random.default_rng(seed).permutation(n)
    pos, batch, queries, work = 0, _FIRST_BATCH, 0, 0
    while pos < n:
        rest = order[pos:]
        free = np.flatnonzero((leader[rest] < 0) & ~asked[rest])[:batch]
        if not len(free):
            break
        q = rest[free]
        pos += int(free[-1]) + 1
        qi, other, d, cost = neighbours(q)
        asked[q] = True
        fresh = (leader[other] < 0) & ~asked[other]
        leader[other[fresh]] = qi[fresh]  # several leaders may claim one item: any will do
        parent = union(parent, qi, other, d, links)
        queries, work = queries + len(q), work + cost
        # at most double: a batch of still uncovered items may hold many of one clique
        batch = int(np.clip(_BATCH_WORK * len(q) // max(cost, 1), _FIRST_BATCH,
                            min(2 * len(q), _MAX_BATCH)))
    parent = _join_stars(parent, leader, asked, wide_pairs, close, links, radius)
    if links:
        la, lb, ld = (np.concatenate(x) for x in zip(*links))
    else:
        la = lb = np.empty(0, dtype=np.int64)
        ld = np.empty(0)
    # label = smallest item of the cluster (roots already are: hooks go to smaller roots)
    return Clusters(parent, la, lb, ld, queries, work)


def _join_stars(parent: np.ndarray, leader: np.ndarray, asked: np.ndarray,
                wide_pairs: WidePairs, close: Close,
                links: list[tuple[np.ndarray, np.ndarray, np.ndarray]],
                radius: float) -> np.ndarray:
    """Find the near pairs between covered items of different leaders' stars (see module)."""
    covered = np.flatnonzero(~asked & (leader >= 0))
    if len(covered) < 2:
        return parent
    lead = leader[covered]
    by = np.argsort(lead, kind="stable")
    covered, lead = covered[by], lead[by]
    heads = np.flatnonzero(np.r_[True, lead[1:] != lead[:-1]])
    stars = lead[heads]
    start = np.zeros(len(parent), dtype=np.int64)
    size = np.zeros(len(parent), dtype=np.int64)
    start[stars], size[stars] = heads, np.diff(np.r_[heads, len(lead)])
    a, b = wide_pairs(stars)
    keep = parent[a] != parent[b]
    a, b = a[keep], b[keep]
    if not len(a):
        return parent
    joined: dict[int, int] = {}  # clusters merged by this step (a small union-find of roots)

    def root(x: int) -> int:
        while x in joined:
            x = joined[x]
        return x

    found: list[tuple[int, int, float]] = []
    todo, at = list(zip(a.tolist(), b.tolist())), 0
    while at < len(todo):
        # leader pairs in chunks of at most _STAR_WORK star members (or one pair); pairs
        # already joined by this step are left out
        chunk: list[tuple[int, int]] = []
        work = 0
        while at < len(todo) and (not chunk or work + size[todo[at][0]] + size[todo[at][1]]
                                  <= _STAR_WORK):
            x, y = todo[at]
            at += 1
            if root(int(parent[x])) != root(int(parent[y])):
                chunk.append((x, y))
                work += int(size[x] + size[y])
        if not chunk:
            continue
        cx, cy = np.array(chunk).T
        # a member of x's star near a member z of y's star is within 2 radius of y's leader
        # (d(z, y) <= radius), and the other way round: members farther are left out
        px, mx = _near_leader(cx, cy, covered, start, size, close, 2.0 * radius)
        py, my = _near_leader(cy, cx, covered, start, size, close, 2.0 * radius)
        for pair, pa, pb in _cross(px, mx, py, my, len(chunk)):
            near, dist = close(pa, pb)
            hit = np.flatnonzero(near)
            _, first = np.unique(pair[hit], return_index=True)
            for h in hit[first].tolist():
                x, y = chunk[int(pair[h])]
                rx, ry = root(int(parent[x])), root(int(parent[y]))
                if rx != ry:
                    found.append((int(pa[h]), int(pb[h]), float(dist[h])))
                    joined[max(rx, ry)] = min(rx, ry)
    if found:
        fa, fb, fd = (np.array(v) for v in zip(*found))
        parent = union(parent, fa.astype(np.int64), fb.astype(np.int64), fd, links)
    return parent


def _near_leader(own: np.ndarray, other: np.ndarray, covered: np.ndarray, start: np.ndarray,
                 size: np.ndarray, close: Close, reach: float) -> tuple[np.ndarray, np.ndarray]:
    """For each pair k: the members of star ``own[k]`` within ``reach`` of leader
    ``other[k]``, as (pair, member) sorted by pair."""
    pair = np.repeat(np.arange(len(own)), size[own])
    at = np.arange(len(pair)) - np.repeat(np.cumsum(size[own]) - size[own], size[own])
    member = covered[start[own][pair] + at]
    _, dist = close(member, other[pair])
    keep = dist <= reach + 1e-9
    return pair[keep], member[keep]


def _cross(px: np.ndarray, mx: np.ndarray, py: np.ndarray, my: np.ndarray, n_pairs: int):
    """Yield (pair, a, b): every (member of x's list, member of y's list) of each pair k, at
    most _STAR_WORK at a time (lists as from :func:`_near_leader`)."""
    nx = np.bincount(px, minlength=n_pairs)
    ny = np.bincount(py, minlength=n_pairs)
    sx, sy = np.cumsum(nx) - nx, np.cumsum(ny) - ny
    cost = nx * ny
    edge = np.cumsum(cost)
    lo = 0
    while lo < n_pairs:
        # pairs whose products fit one block (at least one pair)
        hi = max(lo + 1, int(np.searchsorted(edge, edge[lo] - cost[lo] + _STAR_WORK, "right")))
        ks = np.arange(lo, hi)
        lo = hi
        n = cost[ks]
        if not n.sum():
            continue
        which = np.repeat(ks, n)
        k = np.arange(int(n.sum())) - np.repeat(np.cumsum(n) - n, n)
        yield which, mx[sx[which] + k // ny[which]], my[sy[which] + k % ny[which]]


def components_brute(n: int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Reference: the smallest item of each item's component, from an explicit list of edges."""
    parent = list(range(n))

    def root(x: int) -> int:
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for x, y in zip(np.asarray(a).tolist(), np.asarray(b).tolist()):
        rx, ry = root(x), root(y)
        if rx != ry:
            parent[max(rx, ry)] = min(rx, ry)
    return np.array([root(x) for x in range(n)], dtype=np.int64)
