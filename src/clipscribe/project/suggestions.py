"""Label suggestions of a project: feeds clip features and the export label policy's labels to the
Qt-free, database-free models in :mod:`clipscribe.features.models`.

Training labels follow the export label policy: the lead's gold label first, else the majority
of annotator labels with at least ``min_agreement`` of the votes (leads' own labels and skipped
clips do not vote). A clip without a group is its own group. Features come from the per-user
feature cache (keyed by file SHA-256 and feature version); a clip whose media cannot be decoded
is skipped and reported, nothing else stops.
"""

from __future__ import annotations

import os
import threading
from collections.abc import Callable
from typing import Any

import numpy as np

from .. import export
from ..errors import NotEnoughLabels
from ..features import STREAMS, ClipFeatures, FeatureJob, FeatureRecipe, clip_features, features_for
from ..types import ClipRef
from .context import Service

Progress = Callable[[int, int], None] | None
Cancel = threading.Event | Callable[[], bool] | None
NO_MODEL = ("no suggestion model yet: train one (Project.train_suggester, or "
            "clipscribe suggest DIR)")


class Suggestions(Service):
    recipe = FeatureRecipe()
    #: threads computing features; OpenCV releases the GIL while it decodes and computes flow
    workers = min(2, os.cpu_count() or 1)

    def __init__(self, ctx: Any, peers: Any) -> None:
        super().__init__(ctx, peers)
        self._model: Any = None
        self._reason = NO_MODEL
        self._features: dict[int, ClipFeatures] | None = None
        #: clips whose media could not be described at the last feature pass: id -> reason
        self.skipped: dict[int, str] = {}

    # ---- inputs ---------------------------------------------------------------------------
    def training_labels(self, *, min_agreement: float = 0.6) -> dict[int, str]:
        """Clip id -> label by the export label policy (gold, else a strong enough majority)."""
        out = {}
        for c in self.peers.exporting.export_inputs():
            d = export.decide_label(c.labels, c.gold_label, min_agreement=min_agreement,
                                    clip_id=c.clip_id)
            if d.included and d.label is not None:
                out[int(c.clip_id)] = d.label
        return out

    def clip_features(self, *, clips: list[int] | None = None, progress: Progress = None,
                      cancel: Cancel = None) -> dict[int, ClipFeatures]:
        """Features of every clip (or of ``clips``), from the cache or computed on worker threads;
        clips that cannot be decoded are left out and listed in :attr:`skipped`."""
        rows = self.peers.catalog.clips()
        wanted = None if clips is None else set(clips)
        jobs = [FeatureJob(str(c.id), self.ctx.media_root / c.path, c.sha256, c.frame_count)
                for c in rows if wanted is None or c.id in wanted]
        done, failed = features_for(jobs, self.recipe, workers=self.workers, cancel=cancel,
                                    progress=progress)
        self.skipped = {int(k): v for k, v in failed.items()}
        feats = {int(k): v for k, v in done.items()}
        if clips is None:
            self._features = feats
        return feats

    def _matrix(self, feats: dict[int, ClipFeatures], labels: dict[int, str]):
        ids = [i for i in sorted(labels) if i in feats]
        groups = {c.id: c.group for c in self.peers.catalog.clips()}
        X = {s: np.array([feats[i].stream(s) for i in ids]) for s in STREAMS}
        y = [labels[i] for i in ids]
        g = [groups.get(i) or f"clip {i}" for i in ids]  # no group: the clip is its own group
        return ids, X, y, g

    # ---- use cases ------------------------------------------------------------------------
    def train_suggester(self, *, progress: Progress = None, cancel: Cancel = None,
                        min_agreement: float = 0.6, seed: int = 0):
        """Compute missing features, then train the suggester on the labelled clips.

        Returns the trained suggester; too few labels raise
        :class:`~clipscribe.errors.NotEnoughLabels` (and :meth:`suggest` then explains why)."""
        from ..features import models
        labels = self.training_labels(min_agreement=min_agreement)
        feats = self.clip_features(progress=_share(progress, 0, 9, 10), cancel=cancel)
        ids, X, y, g = self._matrix(feats, labels)
        try:
            model = models.train(X, y, g, seed=seed, cancel=cancel,
                                 progress=_share(progress, 9, 1, 10))
        except NotEnoughLabels as exc:
            self._model, self._reason = None, str(exc)
            raise
        self._model, self._reason = model, ""
        return model

    def compare_streams(self, folds: int = 5, seed: int = 0, *, progress: Progress = None,
                        cancel: Cancel = None, min_agreement: float = 0.6, n_boot: int = 1000):
        """Grouped cross-validation of the single-frame, appearance, motion and fused streams
        (see :class:`clipscribe.features.models.StreamComparison`)."""
        from ..features import models
        labels = self.training_labels(min_agreement=min_agreement)
        feats = self.clip_features(clips=sorted(labels), progress=_share(progress, 0, 1, 2),
                                   cancel=cancel)
        ids, X, y, g = self._matrix(feats, labels)
        result = models.compare(X, y, g, ids, folds=folds, seed=seed, n_boot=n_boot,
                                cancel=cancel, progress=_share(progress, 1, 1, 2))
        skipped = {str(k): v for k, v in self.skipped.items()}
        return models.StreamComparison(**{**result.__dict__, "skipped": skipped})

    def suggest(self, clip: ClipRef) -> list[tuple[str, float]]:
        """``[(label, probability), ...]`` best first; ``[]`` when there is no model (see
        :meth:`suggestion_reason`) or the clip's media cannot be described."""
        if self._model is None:
            return []
        cid = self.ctx.read(lambda s: self.ctx.clip(s, clip).id)
        feats = (self._features or {}).get(cid)
        if feats is None:
            row = next(c for c in self.peers.catalog.clips() if c.id == cid)
            try:
                feats = clip_features(self.ctx.media_root / row.path, self.recipe,
                                      sha256=row.sha256, frame_count=row.frame_count)
            except Exception as exc:  # noqa: BLE001 - MediaError or unreadable file
                self.skipped[cid] = str(exc)
                return []
            if self._features is not None:
                self._features[cid] = feats
        return self._model.ranked({s: feats.stream(s) for s in ("appearance", "motion")})

    def suggestion_reason(self, clip: ClipRef | None = None) -> str:
        """Why :meth:`suggest` gives nothing ("" when it gives suggestions)."""
        if self._model is None:
            return self._reason
        if clip is not None:
            cid = self.ctx.read(lambda s: self.ctx.clip(s, clip).id)
            if cid in self.skipped:
                return f"the clip's media cannot be described: {self.skipped[cid]}"
        return ""


def _share(progress: Progress, start: int, span: int, whole: int) -> Progress:
    """Progress of a part that fills ``span`` of ``whole`` steps from ``start``, in 1000ths."""
    if progress is None:
        return None

    def report(done: int, total: int) -> None:
        frac = done / total if total else 1.0
        progress(int(1000 * (start + span * frac) / whole), 1000)
    return report
