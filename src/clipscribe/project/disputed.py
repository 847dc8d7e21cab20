"""The review queue in two steps, so a desk over 100k clips shows its first page at once: the
order of the disputed clips (clip ids only, from one query per table and numpy), then the rows
of one page (queries over that page's clips alone).

Without an agreement report the order is provisional: by label disagreement alone (1 - share
of the majority label among the annotators' votes), which the label rows give in a fraction of
a second; the report's order (label disagreement, then segment F1, then caption BLEU) replaces
it when the report is ready.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session

from ..errors import RecordError
from ..store.columns import int_columns
from ..store.models import Annotator, Assignment, Caption, Clip, ClipLabel, GoldLabel, Label, Segment
from ..types import DisputedClip, DisputedOrder
from .context import Service

#: the orders the review queue can be ranked in (value: how the desk describes it)
RANKINGS = {
    "disputed": "most disputed first: label disagreement, then segment F1, then caption BLEU",
    "least-certain": "least certain inferred label first: lowest posterior probability of the "
                     "label Dawid-Skene infers (clips without an inferred label last)",
}
NAN = float("nan")
#: clip ids per IN (...) list
CHUNK = 500


def _chunks(ids: Sequence[int]):
    for k in range(0, len(ids), CHUNK):
        yield list(ids[k:k + CHUNK])


def _ints(s: Session, stmt) -> np.ndarray:
    """One integer column as an array (through the driver's cursor: no row objects)."""
    return int_columns(s, stmt)[:, 0]


def _disagreement(labels: Sequence[str]) -> float:
    """1 - share of the most common label (NaN without a vote)."""
    if not labels:
        return NAN
    counts: dict[str, int] = {}
    for lab in labels:
        counts[lab] = counts.get(lab, 0) + 1
    return 1.0 - max(counts.values()) / len(labels)


def inferred_best(report: Any) -> dict[int, tuple[str, float]]:
    """{clip id: (most probable label, its posterior)} from a report's reliability part."""
    rel = getattr(report, "reliability", None)
    inf = rel.inferred if rel is not None else None
    if inf is None or not len(inf.items):
        return {}
    m = np.asarray(inf.posterior_matrix, dtype=float)
    best, prob = m.argmax(axis=1), m.max(axis=1)
    cats = [str(c) for c in inf.label_order]
    return {int(it): (cats[b], float(p)) for it, b, p in zip(inf.items, best.tolist(),
                                                            prob.tolist())}


class Disputed(Service):
    # ---- the order ----------------------------------------------------------------------
    def review_order(self, *, report: Any = None, label: str | None = None,
                     annotator: str | None = None, group: str | None = None,
                     flagged: bool = False, rank_by: str = "disputed") -> DisputedOrder:
        """The clip ids of :meth:`Review.review_queue` in its order, with their ranks, and no
        rows built. Without ``report`` the order is provisional: by label disagreement alone,
        ties by clip id (``DisputedOrder.provisional``). Leads only."""
        self.peers.review.check_reviewer()
        if rank_by not in RANKINGS:
            raise RecordError(f"rank by {rank_by!r}: use one of {', '.join(RANKINGS)}")
        return self.ctx.read(lambda s: self._order(s, report, label, annotator, group, flagged,
                                                   rank_by))

    def _workers(self, s: Session) -> dict[int, str]:
        return {i: n for i, n in s.execute(select(Annotator.id, Annotator.name)
                                           .where(Annotator.role != "lead"))}

    def _votes(self, s: Session, workers: dict[int, str], clips: list[int] | None = None
               ) -> list[tuple[int, int, str]]:
        """(clip, annotator id, label) of the workers' labels that count as votes (a skipper's
        left-over label does not)."""
        def q(ids):
            stmt = (select(ClipLabel.clip_id, ClipLabel.annotator_id, Label.name)
                    .join(Label, Label.id == ClipLabel.label_id))
            sk = select(Assignment.clip_id, Assignment.annotator_id).where(
                Assignment.state == "skipped")
            if ids is not None:
                stmt, sk = stmt.where(ClipLabel.clip_id.in_(ids)), sk.where(
                    Assignment.clip_id.in_(ids))
            skipped = {(c, a) for c, a in s.execute(sk)}
            return [(c, a, lab) for c, a, lab in s.execute(stmt)
                    if a in workers and (c, a) not in skipped]
        if clips is None:
            return q(None)
        return [v for part in _chunks(clips) for v in q(part)]

    def _vote_arrays(self, s: Session, workers: dict[int, str]) -> tuple[np.ndarray, ...]:
        """(clip, annotator id, label id) arrays of the votes: the workers' labels, less those
        left on a clip their annotator skipped. One query read through the driver's cursor, in
        row order, so 300k labels cost no Python object per row beyond the ints."""
        table = int_columns(s, select(ClipLabel.clip_id, ClipLabel.annotator_id,
                                      ClipLabel.label_id).order_by(ClipLabel.id))
        clip, who, lab = table[:, 0], table[:, 1], table[:, 2]
        keep = np.isin(who, np.fromiter(workers, dtype=np.int64, count=len(workers)))
        skipped = [c * (1 << 32) + a for c, a in s.execute(
            select(Assignment.clip_id, Assignment.annotator_id).where(
                Assignment.state == "skipped"))]
        if skipped:
            keep &= ~np.isin(clip * (1 << 32) + who, np.asarray(skipped, dtype=np.int64))
        return clip[keep], who[keep], lab[keep]

    def _order(self, s: Session, report: Any, label: str | None, annotator: str | None,
               group: str | None, flagged: bool, rank_by: str) -> DisputedOrder:
        workers = self._workers(s)
        exists = _ints(s, select(Clip.id).order_by(Clip.id))
        v_clip, v_who, v_lab = self._vote_arrays(s, workers)
        if report is not None:
            table = report.clips
            ranked = np.asarray([int(table.clips[i]) for i in table.worst_first()],
                                dtype=np.int64)
        else:  # most label disagreement first, ties by clip id
            pair, n_pair = np.unique(v_clip * (1 << 32) + v_lab, return_counts=True)
            voted, at = np.unique(pair >> 32, return_inverse=True)
            top = np.zeros(len(voted), dtype=np.int64)
            np.maximum.at(top, at, n_pair)
            per_clip = np.bincount(np.searchsorted(voted, v_clip), minlength=len(voted))
            dis = 1.0 - top / np.maximum(per_clip, 1)
            ranked = voted[np.lexsort((voted, -dis))]
        # nobody worked on the rest: last, by id
        ranked = np.concatenate([ranked, exists[~np.isin(exists, ranked)]])
        keep = np.isin(ranked, exists)  # clips of the report that still exist
        if label is not None:
            lab_id = s.scalar(select(Label.id).where(Label.name == label))
            keep &= np.isin(ranked, v_clip[v_lab == (-1 if lab_id is None else lab_id)])
        if annotator is not None:
            who = self.ctx.annotator(s, annotator)
            worked = set(v_clip[v_who == who.id].tolist())
            for model in (Segment, Caption):
                worked.update(s.scalars(select(model.clip_id).where(model.annotator_id == who.id)))
            keep &= np.isin(ranked, np.fromiter(worked, dtype=np.int64, count=len(worked)))
        if group is not None:
            keep &= np.isin(ranked, _ints(s, select(Clip.id).where(Clip.group_key == group)))
        if flagged:
            marked = {c for c, a, st in s.execute(
                select(Assignment.clip_id, Assignment.annotator_id, Assignment.state).where(
                    Assignment.state.in_(("skipped", "unsure"))))
                if st == "skipped" or a in workers}
            keep &= np.isin(ranked, np.fromiter(marked, dtype=np.int64, count=len(marked)))
        idx = np.flatnonzero(keep)
        clips, ranks = ranked[idx].tolist(), (idx + 1).tolist()
        if rank_by == "least-certain":
            best = inferred_best(report) if report is not None else {}
            clips = sorted(clips, key=lambda c: (c not in best, best.get(c, ("", 0.0))[1]))
            ranks = list(range(1, len(clips) + 1))
        return DisputedOrder(tuple(clips), tuple(ranks), provisional=report is None,
                             rank_by=rank_by)

    # ---- the rows of a page ---------------------------------------------------------------
    def review_rows(self, order: DisputedOrder, start: int = 0, stop: int | None = None, *,
                    report: Any = None) -> list[DisputedClip]:
        """The rows of ``order.clips[start:stop]`` (queries over those clips alone), scored by
        ``report`` (the one the order came from); without one, label disagreement comes from
        the votes and the rest is NaN. Leads only."""
        self.peers.review.check_reviewer()
        ids, ranks = list(order.clips[start:stop]), order.ranks[start:stop]
        return self.ctx.read(lambda s: self._rows(s, ids, ranks, report))

    def _rows(self, s: Session, ids: list[int], ranks: Sequence[int], report: Any
              ) -> list[DisputedClip]:
        workers = self._workers(s)
        info: dict[int, tuple[str, str | None]] = {}
        gold: dict[int, str] = {}
        skipped: dict[int, dict[str, str]] = {}
        unsure: dict[int, dict[str, str]] = {}
        names = {i: n for i, n in s.execute(select(Annotator.id, Annotator.name))}
        for part in _chunks(ids):
            info.update({c: (p, g) for c, p, g in s.execute(
                select(Clip.id, Clip.path, Clip.group_key).where(Clip.id.in_(part)))})
            gold.update((c, n) for c, n in s.execute(select(GoldLabel.clip_id, Label.name)
                                  .join(Label, Label.id == GoldLabel.label_id)
                                  .where(GoldLabel.clip_id.in_(part))))
            for c, a, state, why in s.execute(
                    select(Assignment.clip_id, Assignment.annotator_id, Assignment.state,
                           Assignment.reason).where(Assignment.clip_id.in_(part),
                                                    Assignment.state.in_(("skipped", "unsure")))):
                if state == "skipped":
                    skipped.setdefault(c, {})[names[a]] = why or ""
                elif a in workers:
                    unsure.setdefault(c, {})[names[a]] = why or ""
        labels: dict[int, dict[str, str]] = {}
        for c, a, lab in self._votes(s, workers, ids):
            labels.setdefault(c, {})[workers[a]] = lab
        scores: dict[int, tuple[float, float, float, float]] = {}
        if report is not None:
            t = report.clips
            at = {int(c): i for i, c in enumerate(t.clips)}
            scores = {c: (float(t.label_disagreement[i]), float(t.segment_f1[i]),
                          float(t.caption_bleu[i]), float(t.caption_cider[i]))
                      for c in ids if (i := at.get(c)) is not None}
        best = inferred_best(report) if report is not None else {}
        out = []
        for c, rank in zip(ids, ranks):
            if c not in info:
                continue  # deleted since the order was made
            path, grp = info[c]
            labs = labels.get(c, {})
            sc = scores.get(c) if report is not None else (
                _disagreement(sorted(labs.values())), NAN, NAN, NAN)
            lab, cert = best.get(c, (None, NAN))
            out.append(DisputedClip(rank, c, path, grp, *(sc or (NAN, NAN, NAN, NAN)),
                                    labels=labs, gold_label=gold.get(c),
                                    skipped=skipped.get(c, {}), unsure=unsure.get(c, {}),
                                    inferred_label=lab, certainty=cert))
        return out
