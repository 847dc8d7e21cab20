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

    def _order(self, s: Session, report: Any, label: str | None, annotator: str | None,
               group: str | None, flagged: bool, rank_by: str) -> DisputedOrder:
        workers = self._workers(s)
        groups = {c: g for c, g in s.execute(select(Clip.id, Clip.group_key))}
        votes = self._votes(s, workers)
        if report is not None:
            table = report.clips
            ranked = [int(table.clips[i]) for i in table.worst_first()]
        else:
            by_clip: dict[int, list[str]] = {}
            for c, _a, lab in votes:
                by_clip.setdefault(c, []).append(lab)
            ranked = sorted(by_clip, key=lambda c: (-_disagreement(by_clip[c]), c))
        seen = set(ranked)
        ranked += [c for c in sorted(groups) if c not in seen]  # nobody worked on them: last
        keep = {c for c in ranked if c in groups}  # clips of the report that still exist
        if label is not None:
            keep &= {c for c, _a, lab in votes if lab == label}
        if annotator is not None:
            who = self.ctx.annotator(s, annotator)
            worked = {c for c, a, _ in votes if a == who.id}
            for model in (Segment, Caption):
                worked.update(s.scalars(select(model.clip_id).where(model.annotator_id == who.id)))
            keep &= worked
        if group is not None:
            keep &= {c for c, g in groups.items() if g == group}
        if flagged:
            keep &= set(s.scalars(select(Assignment.clip_id).where(
                Assignment.state == "skipped"))) | {c for c, a in s.execute(
                    select(Assignment.clip_id, Assignment.annotator_id).where(
                        Assignment.state == "unsure")) if a in workers}
        rows = [(c, i + 1) for i, c in enumerate(ranked) if c in keep]
        if rank_by == "least-certain":
            best = inferred_best(report) if report is not None else {}
            rows.sort(key=lambda r: (r[0] not in best, best.get(r[0], ("", 0.0))[1]))
            rows = [(c, i + 1) for i, (c, _) in enumerate(rows)]
        return DisputedOrder(tuple(c for c, _ in rows), tuple(r for _, r in rows),
                             provisional=report is None, rank_by=rank_by)

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
