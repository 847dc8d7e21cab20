"""Annotator reliability for the report: inferred labels with each person's estimated confusion
(:func:`~clipscribe.agreement.truth.dawid_skene`), and accuracy and kappa on check clips whose
answer is known in advance (Wilson intervals, :mod:`clipscribe.agreement.proportion`).

A part that cannot be computed is ``None`` with a ``..._reason`` saying why.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

from ._recipe import Score
from .labels import cohen_kappa
from .proportion import Proportion, proportion
from .truth import InferredLabels, dawid_skene

NO_LABELS = "no clip labels yet"
ONE_ANNOTATOR = "needs clips labelled by at least two annotators"
NO_CHECK_CLIPS = "no check clips with a known answer have been labelled yet"


@dataclass(frozen=True)
class CheckResult:
    """One annotator on check clips: accuracy with its Wilson interval, kappa vs the answers."""

    annotator: str
    accuracy: Proportion
    kappa: Score

    def to_dict(self) -> dict:
        k = float(self.kappa)
        return {"annotator": self.annotator, "accuracy": self.accuracy.to_dict(),
                "kappa": None if math.isnan(k) else k, "kappa_band": self.kappa.interpretation,
                "kappa_recipe": self.kappa.recipe.to_dict()}


@dataclass(frozen=True)
class ReliabilitySummary:
    inferred: InferredLabels | None
    inferred_reason: str | None
    checks: list[CheckResult] = field(default_factory=list)
    checks_reason: str | None = NO_CHECK_CLIPS
    n_check_clips: int = 0

    def to_dict(self, *, items: bool = True) -> dict:
        """JSON-safe dict; ``items=False`` leaves out the inferred label of every item."""
        inf = self.inferred
        return {"inferred": None if inf is None else inf.to_dict(items=items),
                "inferred_reason": self.inferred_reason,
                "checks": [c.to_dict() for c in self.checks],
                "checks_reason": self.checks_reason, "n_check_clips": self.n_check_clips}


def check_clip_results(labels: Sequence[tuple[Any, str, Any]], known: Mapping[Any, Any], *,
                       label_order: Sequence[Any] | None = None, level: float = 0.95,
                       label_set_version: str | None = None) -> list[CheckResult]:
    """Per annotator: share of check clips answered as known (Wilson interval) and Cohen's kappa
    of their answers against the known answers (on the check clips they labelled)."""
    by: dict[str, list[tuple[Any, Any]]] = {}
    for clip, ann, lab in labels:
        if clip in known:
            by.setdefault(str(ann), []).append((lab, known[clip]))
    out = []
    for ann in sorted(by):
        given = [g for g, _ in by[ann]]
        truth = [t for _, t in by[ann]]
        hits = sum(g == t for g, t in by[ann])
        cats = list(label_order) if label_order is not None else None
        if cats is not None:
            cats += [x for x in dict.fromkeys(given + truth) if x not in cats]
        kappa = cohen_kappa(given, truth, labels=cats)
        kappa.recipe = kappa.recipe.replace(variant="cohen-vs-known", annotators=(ann,),
                                            label_set_version=label_set_version)
        out.append(CheckResult(ann, proportion(hits, len(given), level=level,
                                               what="check-clip-accuracy", annotators=[ann],
                                               label_set_version=label_set_version), kappa))
    return out


def reliability_summary(labels: Sequence[tuple[Any, str, Any]], *,
                        known: Mapping[Any, Any] | None = None,
                        label_order: Sequence[Any] | None = None, model: str = "full",
                        label_set_version: str | None = None) -> ReliabilitySummary:
    """Inferred labels (Dawid-Skene, ``model`` "full" or "one-coin") over every label row, and
    check-clip results when ``known`` {clip: answer} is given."""
    rows = list(labels)
    inferred, reason = None, None
    if not rows:
        reason = NO_LABELS
    elif len({str(a) for _, a, _ in rows}) < 2:
        reason = ONE_ANNOTATOR
    else:
        inferred = dawid_skene(rows, model=model, label_order=label_order,
                               label_set_version=label_set_version)
    checks = check_clip_results(rows, known or {}, label_order=label_order,
                                label_set_version=label_set_version)
    n_check = len(set(known or {}))
    return ReliabilitySummary(inferred, reason, checks, None if checks else NO_CHECK_CLIPS,
                              n_check)
