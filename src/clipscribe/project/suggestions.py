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
from ..errors import NotEnoughLabels, RecordError
from ..features import (STREAMS, ClipFeatures, FeatureJob, FeatureRecipe, clip_features,
                        count_uncached_features, features_for)
from ..types import ClipRef
from .context import Service, require

Progress = Callable[[int, int], None] | None
Cancel = threading.Event | Callable[[], bool] | None
NO_MODEL = ("no suggestion model yet: train one (Project.train_suggester, or "
            "clipscribe suggest DIR)")
#: who sees suggestions in the workbench: nobody, an annotator once they have had a first look
#: at the clip (seen its last frame, or labelled it), or everyone at once
VISIBILITY = ("off", "after-look", "on")
VISIBILITY_KEY = "suggestions.shown"
DEFAULT_VISIBILITY = "after-look"
#: clips without cached features that work started in the background (the workbench's
#: training, the board's comparison) computes itself; with more it waits for 'clipscribe
#: compute', which uses every core (features take about 0.4 s a clip on one core)
BACKGROUND_FEATURES = 500
#: the edit-history action of a clip label set by accepting a suggestion
ACCEPT_ACTION = "accept-suggestion"


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

    def features_missing(self, *, labelled_only: bool = False, min_agreement: float = 0.6,
                         stop_after: int | None = None) -> tuple[int, int]:
        """(clips whose features are not in the cache yet, clips looked at): every clip, or
        with ``labelled_only`` the clips training would use. Reads no media; counting stops
        once it passes ``stop_after``."""
        rows = self.peers.catalog.clips()
        if labelled_only:
            labels = self.training_labels(min_agreement=min_agreement)
            rows = [c for c in rows if c.id in labels]
        missing = count_uncached_features((c.sha256 for c in rows), self.recipe,
                                          stop_after=stop_after)
        return missing, len(rows)

    def _matrix(self, feats: dict[int, ClipFeatures], labels: dict[int, str]):
        ids = [i for i in sorted(labels) if i in feats]
        groups = {c.id: c.group for c in self.peers.catalog.clips()}
        X = {s: np.array([feats[i].stream(s) for i in ids]) for s in STREAMS}
        y = [labels[i] for i in ids]
        g = [groups.get(i) or f"clip {i}" for i in ids]  # no group: the clip is its own group
        return ids, X, y, g

    def _enough(self, labels: dict[int, str]) -> None:
        """Too few labels: :class:`NotEnoughLabels` before any feature work."""
        from ..features import models
        groups = {c.id: c.group or f"clip {c.id}" for c in self.peers.catalog.clips()}
        models.usable_classes(list(labels.values()), [groups[i] for i in labels])

    # ---- use cases ------------------------------------------------------------------------
    def train_suggester(self, *, progress: Progress = None, cancel: Cancel = None,
                        min_agreement: float = 0.6, seed: int = 0):
        """Compute missing features, then train the suggester on the labelled clips.

        Returns the trained suggester; too few labels raise
        :class:`~clipscribe.errors.NotEnoughLabels` (and :meth:`suggest` then explains why)."""
        labels = self.training_labels(min_agreement=min_agreement)
        try:
            self._enough(labels)
        except NotEnoughLabels as exc:
            self._model, self._reason = None, str(exc)
            raise
        from ..features import models
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
        self._enough(labels)
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
        row = self.peers.catalog.clip(clip)
        cid = row.id
        feats = (self._features or {}).get(cid)
        if feats is None:
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


    # ---- the workbench: who sees suggestions, accepting one, least certain first -----------
    def suggestion_visibility(self) -> str:
        """``"off"``, ``"after-look"`` or ``"on"`` (see :data:`VISIBILITY`)."""
        from ..store.models import Setting
        row = self.ctx.read(lambda s: s.get(Setting, VISIBILITY_KEY))
        return str(row.value) if row is not None else DEFAULT_VISIBILITY

    def set_suggestion_visibility(self, mode: str) -> None:
        """Whether annotators see suggestions (lead only; recorded in the edit history)."""
        from ..store.models import Setting
        if mode not in VISIBILITY:
            raise RecordError(f"suggestions shown {mode!r}: must be one of {', '.join(VISIBILITY)}")

        def work(s) -> None:
            self.ctx.lead_only(s, "decide who sees label suggestions")
            before = s.get(Setting, VISIBILITY_KEY)
            old = {"suggestions": before.value} if before is not None else None
            s.merge(Setting(key=VISIBILITY_KEY, value=mode))
            self.ctx.log(s, "set", "setting", None, None, old, {"suggestions": mode})
        self.ctx.write(work)

    def accept_suggestion(self, clip: ClipRef, annotator: Any = None, *,
                          expected: str | None = None) -> str:
        """Set the clip's label to its best suggestion, marked in the edit history as accepted
        (action :data:`ACCEPT_ACTION`); returns the label. No suggestion, or a best suggestion
        other than ``expected`` (the one on screen, when the model was retrained since) ->
        RecordError, and nothing changes."""
        ranked = self.suggest(clip)
        if not ranked:
            raise RecordError(f"clip {clip}: no suggestion to accept "
                              f"({self.suggestion_reason(clip) or 'none'})")
        label = ranked[0][0]
        if expected is not None and expected != label:
            raise RecordError(f"clip {clip}: the suggestion changed to {label!r} (the model was "
                              "retrained); look at it again before accepting")

        def work(s) -> None:
            from ..store.models import Edit
            from ..store.unit_of_work import session_edits
            mark = len(session_edits(s))
            self.peers.annotation._set_clip_label(s, clip, annotator, label)
            for eid in session_edits(s)[mark:]:
                e = s.get(Edit, eid)
                if e is not None and e.entity == "clip_label" and e.action == "set":
                    e.action = ACCEPT_ACTION
        self.ctx.write(work)
        return label

    def accepted_suggestions(self) -> set[tuple[int, str]]:
        """(clip id, annotator name) of the clip labels whose latest change accepted a
        suggestion (undone acceptances and labels changed since do not count)."""
        from sqlalchemy import select

        from ..store.models import Annotator, ClipLabel, Edit

        def q(s) -> set[tuple[int, str]]:
            rows = s.execute(select(Edit.id, Edit.entity_id, Edit.action, Edit.reverts)
                             .where(Edit.entity == "clip_label").order_by(Edit.id)).all()
            # per label row, the provenance after each of its edits: an undo brings back the
            # provenance from before the edit it reverts
            after: dict[int, list[tuple[int, bool]]] = {}
            for r in rows:
                seen = after.setdefault(r.entity_id, [])
                if r.action == "undo" and r.reverts is not None:
                    earlier = [st for eid, st in seen if eid < r.reverts]
                    seen.append((r.id, earlier[-1] if earlier else False))
                else:
                    seen.append((r.id, r.action == ACCEPT_ACTION))
            latest = {k: v[-1][1] for k, v in after.items()}
            ids = [i for i, yes in latest.items() if yes]
            if not ids:
                return set()
            return {(c, n) for c, n in s.execute(
                select(ClipLabel.clip_id, Annotator.name).join(Annotator, Annotator.id == ClipLabel.annotator_id)
                .where(ClipLabel.id.in_(ids))).all()}
        return self.ctx.read(q)

    def least_certain_first(self, clips: list[int] | None = None) -> list[tuple[int, float]]:
        """``[(clip id, margin), ...]`` ordered by the margin between the two most probable
        labels, smallest first (uncertainty sampling by margin); clips the model cannot
        describe, or every clip when there is no model, are left out."""
        if self._model is None:
            return []
        wanted = [c.id for c in self.peers.catalog.clips()] if clips is None else clips
        feats = {i: f for i, f in (self._features or {}).items() if i in set(wanted)}
        missing = [i for i in wanted if i not in feats]
        if missing:
            feats.update(self.clip_features(clips=missing))
        ids = sorted(feats)
        if not ids:
            return []
        p = self._model.proba({s: np.array([feats[i].stream(s) for i in ids])
                               for s in ("appearance", "motion")})
        top = -np.sort(-p, axis=1)
        margin = top[:, 0] - (top[:, 1] if p.shape[1] > 1 else 0.0)
        order = np.argsort(margin, kind="stable")
        return [(ids[k], float(margin[k])) for k in order]

    def hand_out_least_certain(self, annotator: Any, n: int) -> list[int]:
        """Reserve for ``annotator`` the next ``n`` clips that still need people, least certain
        first (clips without a margin follow by number); they are pulled in that order, each
        with the usual lease from when it is pulled. Lead only. Returns the clip ids."""
        import datetime as dt

        from ..store.models import utcnow
        require(isinstance(n, int) and n >= 1, f"batch of {n!r} clips: must be >= 1")
        self.ctx.check_lead("hand out clips")
        rank = {c: k for k, (c, _) in enumerate(self.least_certain_first())}
        team = self.peers.team

        def work(s) -> list[int]:
            self.ctx.lead_only(s, "hand out clips")
            me = self.ctx.annotator(s, annotator)
            free = list(s.scalars(team.wanting(me)))
            chosen = sorted(free, key=lambda c: (rank.get(c.id, len(rank)), c.id))[:n]
            now = utcnow()
            for k, clip in enumerate(chosen):  # the pull order follows the time handed out
                team.reserve(s, clip, me, now + dt.timedelta(microseconds=k), None)
            return [c.id for c in chosen]
        return self.ctx.write(work)

    def agreement_with_and_without_suggestions(self) -> dict[str, Any]:
        """Krippendorff's alpha (nominal) of the annotators' clip labels with every label, and
        without the labels set by accepting a suggestion (same votes as the agreement report:
        no leads, no labels left on skipped clips)."""
        from ..agreement import krippendorff_alpha
        leads = {a.name for a in self.peers.catalog.annotators() if a.role == "lead"}
        votes = self.peers.analysis._voting_labels(leads)
        accepted = self.accepted_suggestions()
        out: dict[str, Any] = {"accepted_labels": len([v for v in votes if v[:2] in accepted])}
        for name, rows in (("with", votes), ("without", [v for v in votes if v[:2] not in accepted])):
            people = sorted({a for _, a, _ in rows})
            clips = sorted({c for c, _, _ in rows})
            col, row = {c: j for j, c in enumerate(clips)}, {a: i for i, a in enumerate(people)}
            data = [[None] * len(clips) for _ in people]
            for c, a, lab in rows:
                data[row[a]][col[c]] = lab
            alpha = float(krippendorff_alpha(data)) if people and clips else float("nan")
            out[name] = {"alpha": alpha, "labels": len(rows)}
        out["recipe"] = ("Krippendorff's alpha, nominal, over annotators' clip labels (leads and "
                         "skipped clips left out); 'without': labels whose latest change accepted "
                         "a suggestion removed")
        return out


def _share(progress: Progress, start: int, span: int, whole: int) -> Progress:
    """Progress of a part that fills ``span`` of ``whole`` steps from ``start``, in 1000ths."""
    if progress is None:
        return None

    def report(done: int, total: int) -> None:
        frac = done / total if total else 1.0
        progress(int(1000 * (start + span * frac) / whole), 1000)
    return report


def features_wait(project: Any, *, labelled_only: bool = False) -> str:
    """Why work started in the background should not compute clip features now: "" when at
    most :data:`BACKGROUND_FEATURES` clips lack them, else a sentence that says how many and
    what to run."""
    missing, total = project.features_missing(labelled_only=labelled_only,
                                              stop_after=BACKGROUND_FEATURES)
    if missing <= BACKGROUND_FEATURES:
        return ""
    which = "labelled clips" if labelled_only else "clips"
    return (f"more than {BACKGROUND_FEATURES} of {total} {which} have no clip features yet: "
            "compute them first with 'clipscribe compute DIR --what features'")
