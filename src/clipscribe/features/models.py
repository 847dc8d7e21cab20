"""Label suggestions from clip features: one calibrated linear classifier per stream, late fusion
of appearance and motion, grouped cross-validation. numpy and scikit-learn; no Qt, no database.

Recipe (written into every result):

- stream classifier: ``CalibratedClassifierCV(make_pipeline(StandardScaler(),
  LogisticRegression(C=c)), method="temperature", cv=<grouped splits>)`` -- a multinomial
  logistic regression on standardised features, its probabilities calibrated by temperature
  scaling (Guo et al. 2017, "On Calibration of Modern Neural Networks", ICML) on held-out groups;
  ``c`` from :data:`C_GRID`;
- fused: :math:`p = w\\,p_{app} + (1 - w)\\,p_{mot}` (late fusion by a weighted mean of class
  probabilities), the appearance weight ``w`` from :data:`WEIGHT_GRID`;
- choice: ``c`` of each stream and ``w`` together, by the accuracy (then log-loss) of the fused
  out-of-fold probabilities of the uncalibrated pipelines over grouped folds of the training
  clips; a stream alone by its own. (With few labels a stream must say "I cannot tell" between
  the classes it cannot see, or it drowns the other stream in the fusion: strong
  regularisation does that, and the fused accuracy is what notices it.)
- every split is grouped (``StratifiedGroupKFold``): no group (source) lies on both sides.
"""

from __future__ import annotations

import threading
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from ..errors import NotEnoughLabels
from .extract import STREAMS

__all__ = ["ALL_STREAMS", "NotEnoughLabels", "StreamComparison", "Suggester", "compare", "fuse",
           "grouped_splits", "stream_classifier", "train", "usable_classes"]

#: the comparison's four streams
ALL_STREAMS = (*STREAMS, "fused")
#: appearance weights tried for the fusion (motion gets 1 - w); includes 1/2-1/2 and 1/3-2/3
WEIGHT_GRID = (1 / 4, 1 / 3, 1 / 2, 2 / 3, 3 / 4)
#: a label is learned once this many clips carry it, from at least MIN_GROUPS groups
MIN_PER_CLASS = 5
MIN_GROUPS = 2
#: most folds used to calibrate a stream and to choose the fusion weight
INNER_FOLDS = 3
#: inverse regularisation strengths tried per stream, weakest regularisation last
C_GRID = (0.001, 0.01, 0.1, 1.0)
MAX_ITER = 1000

Cancel = threading.Event | Callable[[], bool] | None
Progress = Callable[[int, int], None] | None


class ClipKeyed(dict):
    """A dict keyed by clip id (int) that also answers to the id's text form (``"12"``)."""

    def __missing__(self, key: Any) -> Any:
        if isinstance(key, str) and key.isdigit() and int(key) in self:
            return self[int(key)]
        raise KeyError(key)


def _stopped(cancel: Cancel) -> bool:
    if cancel is None:
        return False
    return cancel.is_set() if isinstance(cancel, threading.Event) else bool(cancel())


def usable_classes(y: Sequence[str], groups: Sequence[str], *, min_per_class: int = MIN_PER_CLASS,
                   min_groups: int = MIN_GROUPS) -> list[str]:
    """Labels with at least ``min_per_class`` clips from at least ``min_groups`` groups; raises
    :class:`NotEnoughLabels` when fewer than two labels qualify."""
    y_arr, g_arr = np.asarray(y, dtype=object), np.asarray(groups, dtype=object)
    counts = {c: int((y_arr == c).sum()) for c in sorted(set(y))}
    n_groups = {c: len(set(g_arr[y_arr == c])) for c in counts}
    ok = [c for c in counts if counts[c] >= min_per_class and n_groups[c] >= min_groups]
    if len(ok) >= 2:
        return ok
    best = sorted(counts.values(), reverse=True)[:2]
    have = sum(min(n, min_per_class) for n in best)
    shown = ", ".join(f"{c} {counts[c]} in {n_groups[c]} group(s)" for c in counts) or "none"
    raise NotEnoughLabels(have, 2 * min_per_class,
                          f"a label is learned from {min_per_class} labelled clips in at least "
                          f"{min_groups} groups, and two labels are needed; now: {shown}")


def grouped_splits(y: np.ndarray, groups: np.ndarray, n_splits: int, seed: int,
                   *, every_class_trained: bool = True) -> list[tuple[np.ndarray, np.ndarray]]:
    """``StratifiedGroupKFold(n_splits, shuffle=True)`` splits (no group on both sides).

    With ``every_class_trained`` the splits are drawn again with the next seeds (up to 50) until
    every training part holds every class, and ``n_splits`` is lowered when none does; raises
    :class:`NotEnoughLabels` when even two folds cannot."""
    import warnings

    from sklearn.model_selection import StratifiedGroupKFold
    classes = set(y.tolist())
    n_groups = len(set(groups.tolist()))
    largest = max((int((y == c).sum()) for c in classes), default=0)
    for k in range(min(n_splits, n_groups, largest), 1, -1):
        for attempt in range(50 if every_class_trained else 1):
            cv = StratifiedGroupKFold(n_splits=k, shuffle=True, random_state=seed + attempt)
            with warnings.catch_warnings():  # "least populated class has only ..." is expected
                warnings.simplefilter("ignore", UserWarning)
                splits = list(cv.split(np.zeros(len(y)), y, groups))
            if not every_class_trained or all(set(y[tr].tolist()) == classes for tr, _ in splits):
                return splits
    raise NotEnoughLabels(n_groups, 2, "grouped cross-validation needs every label in at least "
                          "two groups on each side")


def stream_classifier(splits: Sequence[tuple[np.ndarray, np.ndarray]], c: float):
    """The calibrated linear classifier of one stream (see the module's recipe)."""
    from sklearn.calibration import CalibratedClassifierCV
    from sklearn.linear_model import LogisticRegression
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler
    base = make_pipeline(StandardScaler(), LogisticRegression(C=c, max_iter=MAX_ITER))
    return CalibratedClassifierCV(base, method="temperature", cv=list(splits))


def fuse(p_appearance: np.ndarray, p_motion: np.ndarray, weight: float) -> np.ndarray:
    """Late fusion: ``weight * p_appearance + (1 - weight) * p_motion`` (rows stay distributions)."""
    return weight * np.asarray(p_appearance) + (1.0 - weight) * np.asarray(p_motion)


def _log_loss(p: np.ndarray, y_idx: np.ndarray) -> float:
    return float(-np.mean(np.log(np.clip(p[np.arange(len(y_idx)), y_idx], 1e-12, 1.0))))


def _score(p: np.ndarray, y_idx: np.ndarray) -> tuple[float, float]:
    """Sort key of out-of-fold probabilities: accuracy first (higher better), then log-loss."""
    return (-float(np.mean(p.argmax(axis=1) == y_idx)), _log_loss(p, y_idx))


def choose_weight(p_appearance: np.ndarray, p_motion: np.ndarray, y_idx: np.ndarray,
                  grid: Sequence[float] = WEIGHT_GRID) -> float:
    """The appearance weight of ``grid`` whose fused out-of-fold probabilities are right most
    often (then: lowest log-loss; then: nearest 1/2)."""
    return min(grid, key=lambda w: (*_score(fuse(p_appearance, p_motion, w), y_idx), abs(w - 0.5)))


def choose_fusion(appearance: Mapping[float, np.ndarray], motion: Mapping[float, np.ndarray],
                  y_idx: np.ndarray, grid: Sequence[float] = WEIGHT_GRID
                  ) -> tuple[float, float, float]:
    """``(c_appearance, c_motion, weight)`` whose fused out-of-fold probabilities are right most
    often (then: lowest log-loss, then stronger regularisation, then the weight nearest 1/2)."""
    return min(((ca, cm, w) for ca in appearance for cm in motion for w in grid),
               key=lambda t: (*_score(fuse(appearance[t[0]], motion[t[1]], t[2]), y_idx),
                              t[0] + t[1], abs(t[2] - 0.5)))


def _oof_by_c(X: np.ndarray, y: np.ndarray, splits, classes: Sequence[str],
              grid: Sequence[float] = C_GRID) -> dict[float, np.ndarray]:
    """Out-of-fold probabilities of the uncalibrated stream pipeline for every ``c`` of
    ``grid``, columns in ``classes``. Within a fold the fits run from the strongest
    regularisation to the weakest, each starting from the last one's weights (warm start)."""
    import warnings

    from sklearn.exceptions import ConvergenceWarning
    from sklearn.linear_model import LogisticRegression
    from sklearn.preprocessing import StandardScaler
    out = {c: np.zeros((len(y), len(classes))) for c in grid}
    col = {c: i for i, c in enumerate(classes)}
    for tr, te in splits:
        scaler = StandardScaler().fit(X[tr])
        xtr, xte = scaler.transform(X[tr]), scaler.transform(X[te])
        est = LogisticRegression(max_iter=MAX_ITER, warm_start=True)
        for c in sorted(grid):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", ConvergenceWarning)
                est.set_params(C=c).fit(xtr, y[tr])
            out[c][np.ix_(te, [col[k] for k in est.classes_])] = est.predict_proba(xte)
    return out


@dataclass
class Suggester:
    """A trained suggester: calibrated appearance and motion classifiers and their fusion weight."""

    classes: tuple[str, ...]
    models: dict[str, Any]
    weight: float
    recipe: str
    trained_on: int
    left_out: dict[str, int] = field(default_factory=dict)
    #: the ``c`` chosen per stream, and the grouped splits used to choose it and to calibrate
    c: dict[str, float] = field(default_factory=dict)
    splits: list = field(default_factory=list)

    def stream_proba(self, stream: str, X: np.ndarray) -> np.ndarray:
        """Calibrated probabilities of one stream, columns in :attr:`classes`."""
        return self.models[stream].predict_proba(np.atleast_2d(X))

    def proba(self, features: Mapping[str, np.ndarray]) -> np.ndarray:
        """Fused probabilities for rows of ``features["appearance"]`` and ``features["motion"]``."""
        return fuse(self.stream_proba("appearance", features["appearance"]),
                    self.stream_proba("motion", features["motion"]), self.weight)

    def ranked(self, features: Mapping[str, np.ndarray]) -> list[tuple[str, float]]:
        """``[(label, probability), ...]`` best first, for one clip."""
        p = self.proba({k: np.atleast_2d(v) for k, v in features.items()})[0]
        order = np.argsort(-p, kind="stable")
        return [(self.classes[i], float(p[i])) for i in order]


def _subset(X: Mapping[str, np.ndarray], y: Sequence[str], groups: Sequence[str], keep: list[str]):
    y_arr, g_arr = np.asarray(y, dtype=object), np.asarray(groups, dtype=object)
    mask = np.isin(y_arr, keep)
    return ({k: np.asarray(v)[mask] for k, v in X.items()}, y_arr[mask].astype(str),
            g_arr[mask].astype(str), mask)


def train(X: Mapping[str, np.ndarray], y: Sequence[str], groups: Sequence[str], *,
          streams: Sequence[str] = ("appearance", "motion"), seed: int = 0,
          cancel: Cancel = None, progress: Progress = None,
          min_per_class: int = MIN_PER_CLASS) -> Suggester:
    """Fit the calibrated classifier of each stream and choose the fusion weight.

    Labels with too few clips are left out (counted in ``left_out``); fewer than two usable
    labels raise :class:`NotEnoughLabels`. ``X`` maps a stream name to rows aligned with ``y``.
    """
    keep = usable_classes(y, groups, min_per_class=min_per_class)
    Xs, ys, gs, _ = _subset(X, y, groups, keep)
    left_out = {str(c): int(n) for c, n in zip(*np.unique(np.asarray(y, dtype=str), return_counts=True))
                if c not in keep}
    splits = grouped_splits(ys, gs, INNER_FOLDS, seed)
    classes = tuple(sorted(keep))
    y_idx = np.searchsorted(classes, ys)
    fused = "appearance" in streams and "motion" in streams
    steps, done = 2 * len(streams), 0

    def tick() -> None:
        nonlocal done
        if _stopped(cancel):
            from ..media import JobCancelled
            raise JobCancelled("training label suggestions: cancelled")
        done += 1
        if progress is not None:
            progress(done, steps)

    chosen: dict[str, float] = {}
    by_c: dict[str, dict[float, np.ndarray]] = {}
    for s in streams:
        by_c[s] = _oof_by_c(Xs[s], ys, splits, classes)
        chosen[s] = min(C_GRID, key=lambda c: (*_score(by_c[s][c], y_idx), c))
        tick()
    weight = 0.5
    if fused:
        chosen["appearance"], chosen["motion"], weight = choose_fusion(
            by_c["appearance"], by_c["motion"], y_idx)
    models = {}
    for s in streams:
        models[s] = stream_classifier(splits, chosen[s]).fit(Xs[s], ys)
        tick()
    recipe = (f"{__doc__.split('Recipe')[1].strip()} Trained on {len(ys)} clips of "
              f"{len(classes)} labels in {len(set(gs))} groups; {len(splits)} grouped folds "
              f"(seed {seed}); c {', '.join(f'{k} {v:g}' for k, v in chosen.items())}; appearance "
              f"weight {weight:.3f}, motion {1 - weight:.3f}.")
    return Suggester(classes, models, weight, " ".join(recipe.split()), len(ys), left_out,
                     chosen, splits)


@dataclass(frozen=True)
class StreamComparison:
    """Grouped cross-validation of the four streams on the same folds.

    ``accuracy``, ``macro_f1``, ``predictions`` (out-of-fold label per clip id), ``confusion``
    (rows true, columns predicted, in ``labels`` order) and ``per_class_accuracy`` (recall) are
    keyed by stream: ``"single-frame"``, ``"appearance"``, ``"motion"``, ``"fused"``.
    ``intervals[metric][stream]`` are percentile bootstrap intervals resampling groups.
    ``weight`` is the appearance weight chosen on every clip (what training picks);
    ``fold_weights`` the weight each outer fold chose on its own training clips.
    """

    accuracy: dict[str, float]
    macro_f1: dict[str, float]
    predictions: dict[str, ClipKeyed]
    confusion: dict[str, np.ndarray]
    per_class_accuracy: dict[str, dict[str, float]]
    intervals: dict[str, dict[str, Any]]
    labels: tuple[str, ...]
    weight: float
    fold_weights: tuple[float, ...]
    folds: int
    seed: int
    clips: int
    groups: int
    left_out: dict[str, int]
    recipe: str
    skipped: dict[str, str] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready form (predictions keyed by the clip id's text)."""
        return {
            "streams": list(ALL_STREAMS), "labels": list(self.labels),
            "accuracy": self.accuracy, "macro_f1": self.macro_f1,
            "intervals": {m: {s: iv.to_dict() for s, iv in v.items()}
                          for m, v in self.intervals.items()},
            "per_class_accuracy": self.per_class_accuracy,
            "confusion": {s: m.tolist() for s, m in self.confusion.items()},
            "fusion_weight": {"appearance": self.weight, "motion": 1 - self.weight},
            "fold_weights": list(self.fold_weights), "folds": self.folds, "seed": self.seed,
            "clips": self.clips, "groups": self.groups, "left_out": self.left_out,
            "skipped": self.skipped, "recipe": self.recipe,
            "predictions": {s: {str(k): v for k, v in p.items()} for s, p in self.predictions.items()},
        }


def _scores(true: np.ndarray, pred: np.ndarray, k: int) -> tuple[float, float, np.ndarray]:
    """Accuracy, macro-F1 (every label counted, 0 where undefined) and confusion of label indices."""
    from sklearn.metrics import accuracy_score, confusion_matrix, f1_score
    labels = list(range(k))
    return (float(accuracy_score(true, pred)),
            float(f1_score(true, pred, labels=labels, average="macro", zero_division=0)),
            confusion_matrix(true, pred, labels=labels))


def _from_confusion_sums(sums: np.ndarray, k: int, metric: str) -> np.ndarray:
    """Accuracy or macro-F1 of each replicate from its flattened k x k confusion sums."""
    cm = sums.reshape(-1, k, k)
    tp = np.diagonal(cm, axis1=1, axis2=2)
    total = cm.sum(axis=(1, 2))
    if metric == "accuracy":
        return np.where(total > 0, tp.sum(axis=1) / np.maximum(total, 1e-12), np.nan)
    denom = cm.sum(axis=1) + cm.sum(axis=2)  # 2TP + FN + FP
    return np.mean(np.where(denom > 0, 2 * tp / np.maximum(denom, 1e-12), 0.0), axis=1)


def compare(X: Mapping[str, np.ndarray], y: Sequence[str], groups: Sequence[str],
            clip_ids: Sequence[int], *, folds: int = 5, seed: int = 0, n_boot: int = 1000,
            cancel: Cancel = None, progress: Progress = None) -> StreamComparison:
    """Out-of-fold predictions of every stream over grouped folds, and their scores.

    Each outer fold trains :func:`train` (all three streams, fusion weight chosen by inner
    grouped folds of its own training clips) and predicts its held-out groups.
    """
    from ..agreement import bootstrap_intervals
    keep = usable_classes(y, groups)
    Xs, ys, gs, mask = _subset(X, y, groups, keep)
    ids = np.asarray(clip_ids)[mask]
    classes = tuple(sorted(str(c) for c in keep))
    k = len(classes)
    y_idx = np.searchsorted(classes, ys)
    outer = grouped_splits(ys, gs, folds, seed)
    proba = {s: np.zeros((len(ys), k)) for s in ALL_STREAMS}
    fold_weights = []
    for f, (tr, te) in enumerate(outer):
        if progress is not None:
            progress(f, len(outer) + 1)
        m = train({s: Xs[s][tr] for s in STREAMS}, ys[tr], gs[tr], streams=STREAMS,
                  seed=seed, cancel=cancel, min_per_class=2)
        cols = [classes.index(c) for c in m.classes]
        for s in STREAMS:
            proba[s][np.ix_(te, cols)] = m.stream_proba(s, Xs[s][te])
        proba["fused"][te] = fuse(proba["appearance"][te], proba["motion"][te], m.weight)
        fold_weights.append(m.weight)
    whole = train(Xs, ys, gs, streams=("appearance", "motion"), seed=seed, cancel=cancel)
    pred = {s: np.argmax(proba[s], axis=1) for s in ALL_STREAMS}
    acc, f1, cm = {}, {}, {}
    for s in ALL_STREAMS:
        acc[s], f1[s], cm[s] = _scores(y_idx, pred[s], k)
    # bootstrap over groups: per group, its clips' confusion cells of every stream side by side
    g_codes = np.unique(gs, return_inverse=True)[1]
    stats = np.zeros((g_codes.max() + 1, len(ALL_STREAMS) * k * k))
    for j, s in enumerate(ALL_STREAMS):
        np.add.at(stats, (g_codes, j * k * k + y_idx * k + pred[s]), 1.0)
    cols = [slice(j * k * k, (j + 1) * k * k) for j in range(len(ALL_STREAMS))]
    intervals: dict[str, dict[str, Any]] = {}
    for metric in ("accuracy", "macro_f1"):
        ivs = bootstrap_intervals(stats, [lambda x, mt=metric: _from_confusion_sums(x, k, mt)] * 4,
                                  cols, n_boot=n_boot, seed=seed)
        intervals[metric] = {s: replace(iv, method="percentile bootstrap over groups")
                             for s, iv in zip(ALL_STREAMS, ivs)}
    per_class = {s: {c: float(cm[s][i, i] / cm[s][i].sum()) if cm[s][i].sum() else float("nan")
                     for i, c in enumerate(classes)} for s in ALL_STREAMS}
    predictions = {s: ClipKeyed((int(i), classes[p]) for i, p in zip(ids, pred[s]))
                   for s in ALL_STREAMS}
    recipe = (f"Grouped cross-validation: StratifiedGroupKFold, {len(outer)} folds, shuffled with "
              f"seed {seed}; {len(ys)} clips of {k} labels in {len(set(gs))} groups. In each fold: "
              f"{whole.recipe.split(' Trained on')[0]} Intervals: 95% percentile bootstrap over "
              f"groups, {n_boot} resamples, seed {seed}.")
    if progress is not None:
        progress(len(outer) + 1, len(outer) + 1)
    return StreamComparison(acc, f1, predictions, cm, per_class, intervals, classes, whole.weight,
                            tuple(fold_weights), len(outer), seed, len(ys), len(set(gs)),
                            whole.left_out, recipe)
