"""Group-exclusive, label-stratified split assignment, stable under added clips.

No library offers all three at once (scikit-learn's ``StratifiedGroupKFold`` makes equal folds
only, takes no fixed assignments and no named ratios), so the greedy placement is written here.
"""

from __future__ import annotations

import hashlib
import math
from collections import Counter
from dataclasses import dataclass
from typing import Hashable, Iterable, Mapping

import numpy as np

Item = tuple[str, Hashable | None, Hashable | None]


@dataclass(frozen=True)
class SplitResult:
    """The outcome of :func:`split_clips`.

    ``conflicts`` names every group that ``frozen`` itself put in more than one split; those
    clips are kept where ``frozen`` put them (the leakage check reports the group).
    """

    assignment: dict[str, str]
    ratios: dict[str, float]
    seed: int
    conflicts: tuple[str, ...] = ()


def normalise_ratios(ratios: Mapping[str, float]) -> dict[str, float]:
    """Check split ratios (positive, finite, at least one named split) and scale them to sum 1."""
    if not ratios:
        raise ValueError("ratios: give at least one split, e.g. {'train': 0.8, 'test': 0.2}")
    out: dict[str, float] = {}
    for name, r in ratios.items():
        if not isinstance(name, str) or not name.strip():
            raise ValueError(f"ratios: split name {name!r} must be a non-empty string")
        try:
            value = float(r)
        except (TypeError, ValueError):
            raise ValueError(f"ratios: {name!r} has non-numeric ratio {r!r}") from None
        if not math.isfinite(value) or value <= 0:
            raise ValueError(f"ratios: {name!r} must be a positive finite number, got {r!r}")
        out[name] = value
    total = sum(out.values())
    return {k: v / total for k, v in out.items()}


def _tie_key(seed: int, key: str) -> int:
    # A per-group hash rather than a shuffle of the whole list: adding one group does not
    # reorder the others, so unfrozen reruns move as little as possible.
    return int.from_bytes(hashlib.blake2b(f"{seed}\x00{key}".encode(), digest_size=8).digest(),
                          "big")


def _prepare(items: Iterable[Item]) -> tuple[list[str], list[str], list[str]]:
    rows = sorted(((str(c), g, lab) for c, g, lab in items), key=lambda r: r[0])
    ids = [r[0] for r in rows]
    for a, b in zip(ids, ids[1:]):
        if a == b:
            raise ValueError(f"clip {a!r} appears more than once in the items")
    groups = [f"g:{g}" if g is not None else f"c:{c}" for c, g, _ in rows]
    labels = [f"l:{lab}" if lab is not None else "n:" for _, _, lab in rows]
    return ids, groups, labels


def split_clips(items: Iterable[Item], ratios: Mapping[str, float], *, seed: int = 0,
                frozen: Mapping[str, str] | None = None) -> SplitResult:
    """Assign clips to splits: group-exclusive, stratified by label, stable, deterministic.

    Groups are placed one by one, largest first (ties broken by a seeded hash of the group
    name), each into the split :math:`s` that least raises the cost

    .. math::

        J = \\sum_s \\Big(\\frac{M_s}{N} - t_s\\Big)^2
            + \\frac{1}{L} \\sum_{l} \\sum_s \\Big(\\frac{C_{sl}}{n_l} - t_s\\Big)^2

    where :math:`t_s` is the target fraction of split :math:`s`, :math:`M_s` its clip count,
    :math:`C_{sl}` its count of label :math:`l`, :math:`n_l` the label's total and :math:`L` the
    number of labels. Placing a group changes one row only, so the increase is computed in closed
    form per split. Largest-first greedy placement is the usual heuristic for this bin-balancing
    problem (as in multi-label iterative stratification, Sechidis et al., ECML PKDD 2011,
    doi:10.1007/978-3-642-23808-6_10); single-clip groups are placed last in bulk, per label, by
    largest-remainder apportionment of each split's remaining deficit (the leftover units going to
    the splits furthest below their overall size, so many labels of one clip each still fill
    every split). When the groups still to
    place are no more than the splits still empty, each goes to an empty split, so no split with
    a positive ratio ends up empty while there are enough groups.

    Parameters
    ----------
    items : iterable of (clip_id, group, label)
        ``group`` None makes the clip its own group; ``label`` may be None.
    ratios : mapping of split name to fraction
        Normalised to sum 1; every value must be positive.
    seed : int
        Breaks ties between equal-sized groups. Same input (in any order) and seed give the
        same output.
    frozen : mapping of clip id to split, optional
        Clips that must stay where they are. A new clip of a group with frozen clips joins
        that group's split. Counts of frozen clips are part of the balance.

    Returns
    -------
    SplitResult
    """
    target = normalise_ratios(ratios)
    frozen = {str(k): str(v) for k, v in (frozen or {}).items()}
    ids, groups, labels = _prepare(items)
    extra = sorted({frozen[c] for c in ids if c in frozen} - set(target))
    names = list(target) + extra
    s_index = {n: i for i, n in enumerate(names)}
    t = np.array([target.get(n, 0.0) for n in names])
    S = len(names)
    assignment: dict[str, str] = {}
    if not ids:
        return SplitResult(assignment, target, seed)

    g_names, g_idx = np.unique(np.array(groups, dtype=object), return_inverse=True)
    l_names, l_idx = np.unique(np.array(labels, dtype=object), return_inverse=True)
    G, L, N = len(g_names), len(l_names), len(ids)
    n_l = np.bincount(l_idx, minlength=L).astype(float)

    # Groups that hold frozen clips: their split is fixed by the frozen clips' splits.
    g_split = np.full(G, -1)
    per_group: dict[int, Counter] = {}
    for i, c in enumerate(ids):
        if c in frozen:
            per_group.setdefault(int(g_idx[i]), Counter())[frozen[c]] += 1
    conflicts = []
    for g, cnt in per_group.items():
        best = sorted(cnt.items(), key=lambda kv: (-kv[1], s_index[kv[0]]))
        g_split[g] = s_index[best[0][0]]
        if len(cnt) > 1:
            parts = ", ".join(f"{s} ({n})" for s, n in best)
            conflicts.append(f"group {g_names[g][2:]!r} is frozen in several splits: {parts}; "
                             f"kept as frozen, new clips follow {best[0][0]!r}")
    clip_split = g_split[g_idx].copy()
    for i, c in enumerate(ids):
        if c in frozen:
            clip_split[i] = s_index[frozen[c]]

    # Counts so far, as fractions of the final totals.
    fixed = clip_split >= 0
    F = np.zeros((S, L))
    np.add.at(F, (clip_split[fixed], l_idx[fixed]), 1.0)
    F /= n_l
    M = np.bincount(clip_split[fixed], minlength=S) / N
    allowed = t > 0

    free = np.flatnonzero(g_split < 0)
    free_clip = ~fixed
    size = np.bincount(g_idx[free_clip], minlength=G)
    order_keys = [(-int(size[g]), _tie_key(seed, g_names[g])) for g in free]
    free = free[np.array(sorted(range(len(free)), key=order_keys.__getitem__), dtype=int)] \
        if len(free) else free

    # Per-group label counts (CSR over groups).
    pair = g_idx[free_clip] * L + l_idx[free_clip]
    upair, ucount = np.unique(pair, return_counts=True)
    ug, ul = upair // L, upair % L
    starts = np.searchsorted(ug, np.arange(G + 1))

    multi = free[size[free] > 1]
    single = free[size[free] == 1]
    for pos, g in enumerate(multi):
        a, b = starts[g], starts[g + 1]
        labs, f = ul[a:b], ucount[a:b] / n_l[ul[a:b]]
        m = size[g] / N
        d_size = m * (2 * (M - t) + m)
        d_lab = ((2 * (F[:, labs] - t[:, None]) + f) * f).sum(axis=1) / L
        # No split may end up empty while groups remain to fill it: once the groups left are
        # no more than the empty splits, each goes to an empty one.
        empty = allowed & (M == 0)
        left = len(multi) - pos + len(single)
        where = empty if 0 < empty.sum() and left <= empty.sum() else allowed
        cost = np.where(where, d_size + d_lab, np.inf)
        s = int(np.argmin(cost))
        g_split[g] = s
        F[s, labs] += f
        M[s] += m

    # Single-clip groups, per label: largest remainder over each split's remaining deficit.
    if len(single):
        lab_of = ul[starts[single]]
        for lab in np.unique(lab_of):
            members = single[lab_of == lab]
            k = len(members)
            deficit = np.where(allowed, np.maximum(t * n_l[lab] - F[:, lab] * n_l[lab], 0), 0)
            want = deficit if deficit.sum() >= k else np.where(allowed, t, 0) * k
            quota = want / want.sum() * k
            take = np.floor(quota).astype(int)
            rest = k - take.sum()
            if rest:
                # the units left over go to splits with a fractional quota (so each split still
                # gets the floor or the ceiling of its quota), those furthest below their overall
                # size first: labels with one or two clips each then still fill every split
                # instead of all landing in the largest
                short = np.where(quota - take > 1e-12, t - M - take / N, -np.inf)
                take[np.argsort(-short, kind="stable")[:rest]] += 1
            g_split[members] = np.repeat(np.arange(S), take)
            np.add.at(F[:, lab], g_split[members], 1.0 / n_l[lab])
            M += take / N

    clip_split = np.where(fixed, clip_split, g_split[g_idx])
    assignment = {c: names[s] for c, s in zip(ids, clip_split.tolist())}
    return SplitResult(assignment, target, seed, tuple(sorted(conflicts)))


def assign_splits(items: Iterable[Item], ratios: Mapping[str, float], *, seed: int = 0,
                  frozen: Mapping[str, str] | None = None) -> dict[str, str]:
    """Assign clips to splits; group-exclusive, label-stratified, stable and deterministic.

    Parameters
    ----------
    items : iterable of (clip_id, group, label)
        ``group`` None makes the clip its own group.
    ratios : mapping of split name to fraction
        Normalised; each must be positive.
    seed : int
    frozen : mapping of clip id to split, optional
        Kept as given; new clips of a frozen group follow it.

    Returns
    -------
    dict
        Clip id -> split name. The method, its cost function and sources are in
        :func:`split_clips`, which also reports frozen groups found in several splits.
    """
    return split_clips(items, ratios, seed=seed, frozen=frozen).assignment


def assign_folds(items: Iterable[Item], k: int, *, seed: int = 0,
                 val_fraction: float = 0.0) -> list[dict[str, str]]:
    """k rotating group-exclusive folds: fold ``i`` is the test set of the ``i``-th split.

    The clips are first cut into ``k`` equal, stratified, group-exclusive parts with
    :func:`split_clips`; split ``i`` tests on part ``i`` and trains on the rest, the usual k-fold
    cross-validation protocol (Hastie, Tibshirani, Friedman, *The Elements of Statistical
    Learning*, 2nd ed., section 7.10).

    Parameters
    ----------
    items : iterable of (clip_id, group, label)
    k : int
        Number of folds, at least 2 and at most the number of groups.
    seed : int
    val_fraction : float
        Share of each split's training side (the other ``k - 1`` parts) held out as ``"val"``,
        again group-exclusive and stratified; 0 for none.

    Returns
    -------
    list of dict
        ``k`` mappings clip id -> ``"train"`` | ``"val"`` | ``"test"``.
    """
    if not isinstance(k, int) or k < 2:
        raise ValueError(f"k must be an integer >= 2, got {k!r}")
    if not 0.0 <= val_fraction < 1.0:
        raise ValueError(f"val_fraction must lie in [0, 1), got {val_fraction!r}")
    items = [(str(c), g, lab) for c, g, lab in items]
    n_groups = len({(g if g is not None else ("clip", c)) for c, g, _ in items})
    if n_groups < k:
        raise ValueError(f"{k} folds need at least {k} groups, found {n_groups}")
    width = len(str(k - 1))
    part = assign_splits(items, {f"fold{i:0{width}d}": 1.0 for i in range(k)}, seed=seed)
    folds = []
    for i in range(k):
        name = f"fold{i:0{width}d}"
        split = {c: ("test" if part[c] == name else "train") for c, _, _ in items}
        if val_fraction > 0:
            rest = [it for it in items if split[it[0]] == "train"]
            split.update(assign_splits(rest, {"train": 1.0 - val_fraction, "val": val_fraction},
                                       seed=seed + i + 1))
        folds.append(split)
    return folds
