"""Label agreement of a whole project from (clip, annotator, label) rows, for the report."""

from __future__ import annotations

from dataclasses import dataclass, field
from operator import itemgetter
from typing import Any, Iterable, Sequence

import numpy as np

from ._recipe import Recipe, Score
from .alpha import binary_unit_stats, nominal_unit_stats, ordinal_unit_stats
from .bootstrap import Interval, bootstrap_intervals
from .labels import fleiss_from_table, kappa_from_confusion


@dataclass(frozen=True)
class PairLabels:
    annotator_a: str
    annotator_b: str
    kappa: Score
    observed: float
    confusion: np.ndarray  # rows: a's label, columns: b's label, in ``labels`` order

    def to_dict(self) -> dict:
        return {"annotator_a": self.annotator_a, "annotator_b": self.annotator_b,
                "kappa": _f(self.kappa), "observed": _f(self.observed),
                "confusion": self.confusion.tolist(), "recipe": self.kappa.recipe.to_dict()}


@dataclass(frozen=True)
class LabelSummary:
    labels: list
    annotators: list[str]
    clips: list
    alpha: Score
    alpha_ci: Interval
    fleiss: Score | None
    fleiss_reason: str | None
    pairs: list[PairLabels]
    per_label: dict[Any, tuple[Score, Interval]]
    disagreement: np.ndarray          # per clip: 1 - share of the majority label (NaN: unlabelled)
    raters_per_clip: np.ndarray = field(repr=False)

    def to_dict(self) -> dict:
        return {
            "labels": [str(x) for x in self.labels], "annotators": self.annotators,
            "alpha": {"value": _f(self.alpha), "band": self.alpha.interpretation,
                      "ci": self.alpha_ci.to_dict(), "recipe": self.alpha.recipe.to_dict()},
            "fleiss": None if self.fleiss is None else {
                "value": _f(self.fleiss), "band": self.fleiss.interpretation,
                "recipe": self.fleiss.recipe.to_dict()},
            "fleiss_reason": self.fleiss_reason,
            "pairs": [p.to_dict() for p in self.pairs],
            "per_label": {str(k): {"value": _f(s), "ci": ci.to_dict(), "band": s.interpretation,
                                   "recipe": s.recipe.to_dict()}
                          for k, (s, ci) in self.per_label.items()},
        }


def _f(x: float) -> float | None:
    x = float(x)
    return None if np.isnan(x) else x


def collect(rows: Iterable[Sequence[Any]], label_order: Sequence[Any] | None):
    """rows -> (codes annotators x clips, clips, annotators, labels). Last row per cell wins."""
    rows = rows if isinstance(rows, list) else list(rows)
    try:
        bad = set(map(len, rows)) - {3}
    except TypeError:
        bad = {None}
    if bad:
        n = next(i for i, r in enumerate(rows) if not hasattr(r, "__len__") or len(r) != 3)
        raise ValueError(f"labels[{n}] must be a (clip, annotator, label) tuple")
    if not rows:
        return np.zeros((0, 0), dtype=np.int64), [], [], list(label_order or [])
    # columns via itemgetter: zip(*rows) would pass every row as an argument (slow at 500k)
    clip_col, ann_col, lab_col = (list(map(itemgetter(k), rows)) for k in range(3))
    clips = list(dict.fromkeys(clip_col))
    clip_ix = {c: i for i, c in enumerate(clips)}
    raw_anns = list(dict.fromkeys(ann_col))
    annotators = sorted({str(a) for a in raw_anns})
    named = {a: i for i, a in enumerate(annotators)}
    ann_ix = {a: named[str(a)] for a in raw_anns}  # 1 and "1" are the same annotator
    if label_order is None:
        labels = _sorted(list(dict.fromkeys(lab_col)))
    else:
        labels = list(label_order)
        known = set(labels)
        for n, lab in enumerate(lab_col):
            if lab not in known:
                raise ValueError(f"labels[{n}]: label {lab!r} is not in label_order")
    lab_ix = {lab: i for i, lab in enumerate(labels)}
    count = len(rows)
    ci = np.fromiter(map(clip_ix.__getitem__, clip_col), dtype=np.int64, count=count)
    ai = np.fromiter(map(ann_ix.__getitem__, ann_col), dtype=np.int64, count=count)
    li = np.fromiter(map(lab_ix.__getitem__, lab_col), dtype=np.int64, count=count)
    codes = np.full((len(annotators), len(clips)), -1, dtype=np.int64)
    flat = ai * len(clips) + ci
    if np.bincount(flat).max() > 1:  # a repeated (clip, annotator): keep its last row
        _, last = np.unique(flat[::-1], return_index=True)
        keep = count - 1 - last
        ai, ci, li = ai[keep], ci[keep], li[keep]
    codes[ai, ci] = li
    return codes, clips, annotators, labels


def _sorted(xs: list) -> list:
    try:
        return sorted(xs)
    except TypeError:
        return sorted(xs, key=str)


def summarize(codes: np.ndarray, clips: list, annotators: list[str], labels: list, *,
              ordinal: bool, seed: int, n_boot: int, label_set_version: str | None) -> LabelSummary:
    a, u = codes.shape
    v = max(len(labels), 1)
    keep = codes >= 0
    table = np.bincount((np.broadcast_to(np.arange(u), (a, u))[keep] * v + codes[keep]),
                        minlength=u * v).reshape(u, v)
    m = table.sum(axis=1)
    level = "ordinal" if ordinal else "nominal"
    overall = (ordinal_unit_stats if ordinal else nominal_unit_stats)(table)
    binaries = binary_unit_stats(table)
    blocks = [overall] + binaries
    stats = np.concatenate([b.stats for b in blocks], axis=1)
    cols, start = [], 0
    for b in blocks:
        cols.append(slice(start, start + b.stats.shape[1]))
        start += b.stats.shape[1]
    # every statistic is a function of the clip's label counts: key the rows by those counts
    base = int(m.max()) + 1 if u else 1
    keys = None
    if base ** v < 2**62:
        keys = table @ (base ** np.arange(v, dtype=np.int64))
    cis = bootstrap_intervals(stats, [b.finish for b in blocks], cols, n_boot=n_boot, seed=seed,
                              row_keys=keys)
    common = dict(n_raters=a, annotators=annotators, label_set_version=label_set_version)
    alpha = Score(float(overall.finish(overall.stats.sum(axis=0))), Recipe.make(
        "alpha", "krippendorff", level=level, ci="bootstrap", n_boot=n_boot, seed=seed,
        n_items=overall.n_pairable, **common))
    per_label = {}
    for lab, b, ci in zip(labels, binaries, cis[1:]):
        per_label[lab] = (Score(float(b.finish(b.stats.sum(axis=0))), Recipe.make(
            "alpha", "krippendorff-one-vs-rest", level="nominal", label=lab, n_boot=n_boot,
            seed=seed, n_items=b.n_pairable, **common)), ci)
    rated = m > 0
    fleiss, reason = None, None
    if not rated.any():
        reason = "no labels"
    elif len(set(m[rated].tolist())) != 1:
        reason = "clips have different numbers of labels (Fleiss needs a fixed number)"
    elif m[rated][0] < 2:
        reason = "each clip has one label only"
    else:
        val, note = fleiss_from_table(table[rated])
        fleiss = Score(val, Recipe.make("kappa", "fleiss", n_items=int(rated.sum()), note=note,
                                        **{**common, "n_raters": int(m[rated][0])}))
    pairs = []
    weights = "linear" if ordinal else None
    for i in range(a):
        for j in range(i + 1, a):
            both = keep[i] & keep[j]
            conf = np.bincount(codes[i, both] * v + codes[j, both], minlength=v * v).reshape(v, v)
            val, note = kappa_from_confusion(conf, weights)
            n = int(conf.sum())
            rec = Recipe.make("kappa", "cohen", weights=weights or "none", n_raters=2, n_items=n,
                              annotators=(annotators[i], annotators[j]), note=note,
                              label_set_version=label_set_version)
            pairs.append(PairLabels(annotators[i], annotators[j], Score(val, rec),
                                    float(np.trace(conf) / n) if n else float("nan"), conf))
    with np.errstate(invalid="ignore", divide="ignore"):
        disagreement = np.where(rated, 1.0 - table.max(axis=1) / np.maximum(m, 1), np.nan)
    return LabelSummary(labels, annotators, clips, alpha, cis[0], fleiss, reason, pairs,
                        per_label, disagreement, m)
