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
