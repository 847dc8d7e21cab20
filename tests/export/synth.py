"""Synthetic export inputs for the tests (invented data, seeded)."""

from __future__ import annotations

from collections import Counter

import numpy as np


def grouped_items(n: int, n_groups: int, n_labels: int, *, seed: int = 0,
                  purity: float = 0.5) -> list[tuple[str, str, str]]:
    """``n`` clips in ``n_groups`` groups of uneven size; each group leans to one label."""
    rng = np.random.default_rng(seed)
    weights = rng.pareto(2.0, n_groups) + 1.0
    g = rng.choice(n_groups, size=n, p=weights / weights.sum())
    lean = rng.integers(0, n_labels, n_groups)
    lab = np.where(rng.random(n) < purity, lean[g], rng.integers(0, n_labels, n))
    return [(f"c{i:06d}", f"g{g[i]:04d}", f"label{lab[i]:02d}") for i in range(n)]


def split_fractions(assignment: dict[str, str]) -> dict[str, float]:
    n = len(assignment)
    return {s: k / n for s, k in Counter(assignment.values()).items()}


def label_deviation(items, assignment: dict[str, str], ratios: dict[str, float]) -> float:
    """Mean over (split, label) of |share of the label's clips in the split - target|."""
    total = Counter(lab for _, _, lab in items)
    cell = Counter((assignment[c], lab) for c, _, lab in items)
    rsum = sum(ratios.values())
    devs = [abs(cell[(s, lab)] / total[lab] - r / rsum) for s, r in ratios.items()
            for lab in total]
    return float(np.mean(devs))


def groups_in_several_splits(items, assignment: dict[str, str]) -> list[str]:
    seen: dict[str, set[str]] = {}
    for c, g, _ in items:
        if g is not None:
            seen.setdefault(g, set()).add(assignment[c])
    return sorted(g for g, s in seen.items() if len(s) > 1)


def flip_bits(code: int, bits) -> int:
    for b in bits:
        code ^= 1 << int(b)
    return code


def camera_fingerprints(n_cameras: int, per_camera: int, spread: int, *, apart: int,
                        seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """Fingerprints of clips from fixed cameras: ``(codes, camera of each clip)``.

    Each camera has a base code; each clip flips at most ``spread`` bits of it, so two clips of
    one camera differ in at most ``2 * spread`` bits. Bases are at least ``apart`` bits from
    each other, so clips of different cameras differ in at least ``apart - 2 * spread``.
    Clips come in shuffled order.
    """
    rng = np.random.default_rng(seed)
    bases: list[int] = []
    while len(bases) < n_cameras:
        b = int(rng.integers(0, 2**63)) * 2 + int(rng.integers(0, 2))
        if all((b ^ o).bit_count() >= apart for o in bases):
            bases.append(b)
    camera = rng.permutation(np.repeat(np.arange(n_cameras), per_camera))
    codes = [flip_bits(bases[c], rng.choice(64, rng.integers(0, spread + 1), replace=False))
             for c in camera.tolist()]
    return np.array(codes, dtype=np.uint64), camera


def chain_fingerprints(n_chains: int, links: int, step: int, *,
                       seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    """Chains of codes, each ``step`` bits from the one before on fresh bits, so the ends of a
    chain are ``links * step`` bits apart: ``(codes, chain of each code)``, shuffled."""
    rng = np.random.default_rng(seed)
    codes, chain = [], []
    for k in range(n_chains):
        x, bits = int(rng.integers(0, 2**63)), rng.permutation(64)
        for i in range(links + 1):
            codes.append(x)
            chain.append(k)
            x = flip_bits(x, bits[i * step:(i + 1) * step])
    order = rng.permutation(len(codes))
    return np.array(codes, dtype=np.uint64)[order], np.array(chain)[order]


def same_partition(label: np.ndarray, truth: np.ndarray) -> bool:
    """Whether two labellings put the items into the same groups (names aside)."""
    pairs = set(zip(np.asarray(label).tolist(), np.asarray(truth).tolist()))
    return len(pairs) == len(set(np.asarray(label).tolist())) == len(set(np.asarray(truth).tolist()))
