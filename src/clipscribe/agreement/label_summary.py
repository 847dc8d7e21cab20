"""Label agreement of a whole project from (clip, annotator, label) rows, for the report."""

from __future__ import annotations

from dataclasses import dataclass, field
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
    clip_ix: dict = {}
    ann_ix: dict = {}
    lab_ix: dict = {} if label_order is None else {lab: i for i, lab in enumerate(label_order)}
    ci, ai, li = [], [], []
    for n, row in enumerate(rows):
        try:
            clip, ann, lab = row
        except (TypeError, ValueError):
            raise ValueError(f"labels[{n}] must be a (clip, annotator, label) tuple") from None
        ci.append(clip_ix.setdefault(clip, len(clip_ix)))
        ai.append(ann_ix.setdefault(str(ann), len(ann_ix)))
        j = lab_ix.get(lab) if label_order is not None else lab_ix.setdefault(lab, len(lab_ix))
        if j is None:
            raise ValueError(f"labels[{n}]: label {lab!r} is not in label_order")
        li.append(j)
    labels = list(lab_ix) if label_order is not None else _sorted(list(lab_ix))
    remap = np.array([labels.index(lab) for lab in lab_ix], dtype=np.int64)
    annotators = sorted(ann_ix)
    aremap = np.array([annotators.index(a) for a in ann_ix], dtype=np.int64)
    codes = np.full((len(annotators), len(clip_ix)), -1, dtype=np.int64)
    if ci:
        codes[aremap[np.asarray(ai)], np.asarray(ci)] = remap[np.asarray(li)]
    return codes, list(clip_ix), annotators, labels


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
    cis = bootstrap_intervals(stats, [b.finish for b in blocks], cols, n_boot=n_boot, seed=seed)
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
        val, note = fleiss_from_table(table[rated].astype(np.float64))
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
