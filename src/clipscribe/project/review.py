"""The lead's review desk, as façade queries: the disputed-clip queue, one clip's comparison,
annotator throughput and the agreement trend. Writes go through the gold service (:mod:`.gold`)."""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

import numpy as np

from sqlalchemy import func, select
from sqlalchemy.orm import Session

from ..agreement import krippendorff_alpha
from ..agreement._recipe import Recipe
from ..errors import RecordError
from ..store.models import Annotator, Assignment, Edit, GoldCaption
from ..types import (  # noqa: F401 (re-exported)
    IDLE_SECONDS,
    ClipComparison,
    ClipRef,
    DisputedClip,
    DisputedOrder,
    GoldCaptionInfo,
    Throughput,
    TrendPoint,
)
from .annotate import CaptionInfo, SegmentInfo
from .disputed import RANKINGS

from .work_events import WorkEvents, active_seconds, read_work_events


from ..errors import NotALeadError  # noqa: E402,F401 (re-exported; defined with every public error)
from .context import Service

MIN_WEEKS = 3  # by="auto" plots weeks once the labels span this many


def _posterior_of(report: Any, clip: int) -> dict[str, float]:
    """{label: posterior} of one clip from a report's reliability part ({} when not
    inferred), found without building the other clips'."""
    rel = getattr(report, "reliability", None)
    inf = rel.inferred if rel is not None else None
    if inf is None:
        return {}
    at = next((i for i, it in enumerate(inf.items) if int(it) == clip), None)
    if at is None:
        return {}
    return dict(zip((str(c) for c in inf.label_order), inf.posterior_matrix[at].tolist()))


def _by_week(order: list[int], when: dict[int, dt.datetime]) -> dict[str, list[int]]:
    """Clips (in ``order``) grouped by the ISO week of their last label; undated clips left out."""
    out: dict[str, list[int]] = {}
    for c in order:
        if c in when:
            t = when[c].astimezone(dt.timezone.utc) if when[c].tzinfo else when[c]
            year, week, _ = t.isocalendar()
            out.setdefault(f"{year}-W{week:02d}", []).append(c)
    return out




class Review(Service):
    # ---- who may review -----------------------------------------------------------------
    def check_reviewer(self, who: str | None = None) -> str:
        """The name of the person reviewing; :class:`NotALeadError` unless they are a lead."""
        row = self.ctx.read(lambda s: self.ctx.require_lead(
            s, "review", who or self.ctx.user,
            refusal="the review desk is for leads: {who!r} is {role}"))
        return row.name

    def _workers(self) -> set[str]:
        return {a.name for a in self.peers.catalog.annotators() if a.role != "lead"}

    def skips(self, clip: ClipRef | None = None) -> list[tuple[int, str, str]]:
        """``(clip id, annotator, reason)`` of every skipped clip (or of one clip), by clip and
        name. A skip is not a label: agreement and exports leave the skipper's label out."""
        return self._in_state("skipped", clip)

    def unsure_flags(self, clip: ClipRef | None = None) -> list[tuple[int, str, str]]:
        """``(clip id, annotator, note)`` of every clip flagged unsure (note "" when none
        was given), by clip and name. An unsure flag is not a skip: the label still counts."""
        return self._in_state("unsure", clip)

    def _in_state(self, state: str, clip: ClipRef | None) -> list[tuple[int, str, str]]:
        def q(s: Session) -> list[tuple[int, str, str]]:
            stmt = (select(Assignment.clip_id, Annotator.name, Assignment.reason)
                    .join(Annotator, Annotator.id == Assignment.annotator_id)
                    .where(Assignment.state == state)
                    .order_by(Assignment.clip_id, Annotator.name))
            if clip is not None:
                stmt = stmt.where(Assignment.clip_id == self.ctx.clip(s, clip).id)
            return [(c, a, r or "") for c, a, r in s.execute(stmt)]
        return self.ctx.read(q)

    # ---- the queue ----------------------------------------------------------------------
    def review_queue(self, *, label: str | None = None, annotator: str | None = None,
                     group: str | None = None, report: Any = None, seed: int = 0,
                     n_boot: int = 200, flagged: bool = False,
                     rank_by: str = "disputed", provisional: bool = False,
                     order: DisputedOrder | None = None, offset: int = 0,
                     limit: int | None = None) -> list[DisputedClip]:
        """Clips most disputed first, as the agreement report orders them: most label
        disagreement (1 - majority share), then lowest mean pairwise segment F1, then lowest
        leave-one-out caption BLEU (see :meth:`ClipTable.worst_first`).

        ``rank_by="least-certain"`` orders them by the posterior probability of the label
        Dawid-Skene infers, lowest first (ties keep the disputed order; clips without an
        inferred label come last). Each row carries its inferred label and that probability.

        ``label`` keeps clips some annotator gave that label; ``annotator`` keeps clips that
        person labelled, segmented or captioned; ``group`` keeps one group; ``flagged`` keeps
        clips someone skipped or flagged unsure. Pass a ready ``report`` to skip recomputing
        it; ``provisional=True`` computes none and orders by label disagreement alone.
        ``order`` (from :meth:`review_order`, with the ``report`` it was made from) skips
        ordering again; ``offset``/``limit`` give one page of rows. Leads only.
        """
        self.check_reviewer()
        if order is None:
            if rank_by not in RANKINGS:
                raise RecordError(f"rank by {rank_by!r}: use one of {', '.join(RANKINGS)}")
            if not provisional and report is None:
                report = self.peers.analysis.agreement_report(seed=seed, n_boot=n_boot)
            order = self.peers.disputed.review_order(
                report=None if provisional else report, label=label, annotator=annotator,
                group=group, flagged=flagged, rank_by=rank_by)
        stop = None if limit is None else offset + limit
        return self.peers.disputed.review_rows(order, offset, stop, report=report)

    def most_disputed_clip(self) -> int | None:
        """The first clip of :meth:`review_queue`, or None in an empty project. Leads only."""
        rows = self.review_queue(n_boot=50)
        return rows[0].clip if rows else None

    # ---- one clip -----------------------------------------------------------------------
    def clip_comparison(self, clip: ClipRef, *, report: Any = None) -> ClipComparison:
        """Every annotator's label, segments and captions of ``clip`` beside the gold, and who
        skipped it with their reason (a skipper's left-over label is not among ``labels``).
        Leads only."""
        self.check_reviewer()
        info = self.peers.catalog.clip(clip)
        workers = self._workers()
        skipped = {a: why for _, a, why in self.skips(info.id) if a in workers}
        unsure = {a: note for _, a, note in self.unsure_flags(info.id) if a in workers}
        labels = {a: lab for c, a, lab in self.peers.annotation.clip_labels(clip=info.id)
                  if a in workers and a not in skipped}
        segs: dict[str, list[SegmentInfo]] = {}
        for g in self.peers.annotation.segments(clip=info.id):
            if g.annotator in workers:
                segs.setdefault(g.annotator, []).append(g)
        caps: dict[str, list[CaptionInfo]] = {}
        for c in self.peers.annotation.caption_rows(clip=info.id):
            if c.annotator in workers:
                caps.setdefault(c.annotator, []).append(c)
        names = sorted(set(labels) | set(segs) | set(caps) | set(skipped) | set(unsure))
        scores: dict[str, float] = {}
        posterior = _posterior_of(report, info.id) if report is not None else {}
        if report is not None:  # one row of the report's table (no row objects for the rest)
            at = next((i for i, c in enumerate(report.clips.clips) if int(c) == info.id), None)
            if at is not None:
                scores = {k: v for k, v in report.clips.row(at).to_dict().items() if k != "clip"}
        return ClipComparison(
            info, names, labels, {a: sorted(v, key=lambda g: g.start) for a, v in segs.items()},
            caps, self.peers.gold.gold_labels().get(info.id),
            [(lab, s, e) for _, lab, s, e in self.peers.gold.gold_segments(info.id)],
            self.gold_caption_rows(info.id), self.peers.gold.comments(info.id), scores, skipped,
            unsure, posterior)

    def gold_caption_rows(self, clip: ClipRef) -> list[GoldCaptionInfo]:
        """A clip's gold captions with the annotator caption each came from."""
        def q(s: Session) -> list[GoldCaptionInfo]:
            cid = self.ctx.clip(s, clip).id
            stmt = select(GoldCaption).where(GoldCaption.clip_id == cid).order_by(
                GoldCaption.position, GoldCaption.id)
            return [GoldCaptionInfo(g.id, g.position, g.text, g.source_caption_id)
                    for g in s.scalars(stmt)]
        return self.ctx.read(q)

    # ---- throughput and trend -------------------------------------------------------------
    def _work_events(self) -> WorkEvents:
        """Every annotation edit of a worker as columns (see :mod:`.work_events`), credited to
        the annotator whose row changed (an import by the lead counts for the annotator it
        was for)."""
        ids = {a.id: a.name for a in self.peers.catalog.annotators()}
        workers = self._workers()

        def q(s: Session) -> WorkEvents:
            # the history only grows: its newest id and its length say whether it changed
            # since the last read (throughput and the trend both read it for one board)
            key = (tuple(s.execute(select(func.max(Edit.id), func.count(Edit.id))).one()),
                   sorted(ids.items()), sorted(workers))
            kept = getattr(self, "_events_kept", None)
            if kept is not None and kept[0] == key:
                return kept[1]
            events = read_work_events(s, ids, workers)
            self._events_kept = (key, events)
            return events
        return self.ctx.read(q)

    def throughput(self, *, idle_seconds: float = IDLE_SECONDS) -> dict[str, Throughput]:
        r"""Clips per hour per annotator from the edit history.

        Working time :math:`T_a = \sum_i \min(t_{i+1} - t_i, \tau)` over the annotator's edits
        in time order, with :math:`\tau` = ``idle_seconds`` (a longer pause is a break; our
        choice, 5 minutes by default); clips per hour is :math:`3600\,C_a / T_a` with
        :math:`C_a` the distinct clips the annotator edited (NaN when :math:`T_a = 0`).
        """
        events = self._work_events()
        out = {}
        for name in sorted(self._workers()):
            times, clips = events.of(name)
            active = active_seconds(times, idle_seconds)
            n = len(np.unique(clips))
            rate = 3600.0 * n / active if active > 0 else math.nan
            rec = Recipe.make("throughput", "clips-per-hour", idle_cap_s=idle_seconds,
                              n_raters=1, n_items=n, annotators=[name],
                              note=None if active > 0 else "no working time measured")
            out[name] = Throughput(name, n, len(times), active, rate, rec)
        return out

    def agreement_trend(self, *, window: int | None = None, by: str = "auto") -> list[TrendPoint]:
        r"""Krippendorff's alpha (nominal) of the annotators' labels over time, clips ordered by
        when their last label was set. ``by="clips"``: consecutive windows of ``window`` clips
        (default: six windows, at least three clips each). ``by="week"``: one point per ISO
        calendar week (UTC). ``by="auto"``: weeks when the labels span at least
        :data:`MIN_WEEKS` weeks, else windows of clips. Alpha as in
        :func:`clipscribe.agreement.krippendorff_alpha` (Krippendorff 2004, *Content Analysis*,
        ch. 11)."""
        if by not in ("auto", "clips", "week"):
            raise RecordError(f"trend by {by!r}: use auto, clips or week")
        workers = self._workers()
        rows = [r for r in self.peers.annotation.clip_labels() if r[1] in workers]
        when = self._work_events().last_per_clip()
        order = sorted({c for c, _, _ in rows}, key=lambda c: (when.get(c, dt.datetime.min), c))
        if not order:
            return []
        weeks = _by_week(order, when)
        if by == "week" or (by == "auto" and window is None and len(weeks) >= MIN_WEEKS):
            parts, how = list(weeks.items()), "ISO week (UTC) of the last label"
        else:
            size = window or max(3, math.ceil(len(order) / 6))
            parts = [("", order[k:k + size]) for k in range(0, len(order), size)]
            how = f"windows of {size} clips by time of last label"
        names = sorted({a for _, a, _ in rows})
        labels = [l.name for l in self.peers.catalog.labels()]
        cell = {(c, a): lab for c, a, lab in rows}
        out = []
        for period, part in parts:
            data = [[cell.get((c, a)) for c in part] for a in names]
            val = krippendorff_alpha(data, labels=labels)
            times = [when[c] for c in part if c in when] or [dt.datetime.min]
            rec = val.recipe.replace(options={**dict(val.recipe.options), "trend": how})
            out.append(TrendPoint(len(out) + 1, min(times), max(times), part, float(val), rec,
                                  period))
        return out
