"""Agreement of a project: feeds the pure agreement engine with the project's rows."""

from __future__ import annotations

import dataclasses
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from ..agreement import AgreementReport, agreement_report
from ..agreement.report import OVERLAP_CLIPS, CaptionPart, caption_part
from ..store.models import Clip
from .context import Service


class Analysis(Service):
    def agreement_report(self, *, captions: bool = True, segments: bool = True, seed: int = 0,
                         n_boot: int = 1000, truth_model: str = "full",
                         cache: bool = True) -> AgreementReport:
        """Labels, segments and captions agreement over every annotator's work (leads' gold
        decisions excluded), with bootstrap confidence intervals resampling clips.

        With ``cache`` (the default) the caption part, which costs most, is kept in the
        project's result cache and reused while no caption (and no person) changed; the
        report's recipe note then says so and what the kept part covers."""
        self.peers.team.require_full_view("the agreement report")
        leads = {a.name for a in self.peers.catalog.annotators() if a.role == "lead"}
        labels = self._voting_labels(leads)
        segs = ([(g.clip, g.annotator, g.label, g.start, g.end) for g in self.peers.annotation.segments()
                 if g.annotator not in leads] if segments else None)
        fps, frames = self._clip_frames() if segs else (None, None)  # used for segments only
        part, covers = self._caption_part(leads, captions, seed, cache)
        rep = agreement_report(
            labels, segs, None, label_order=[l.name for l in self.peers.catalog.labels()],
            ordinal=self.peers.catalog.labels_ordinal(), fps=fps, frame_count=frames, seed=seed,
            n_boot=n_boot, label_set_version=f"v{self.peers.catalog.label_set_version()}",
            reliability=True, truth_model=truth_model, known_answers=self.known_answers(),
            captions_done=part)
        if covers is None:
            return rep
        note = (f"caption part from the result cache: {covers['rows']['captions'][0]} caption rows "
                f"up to edit {covers['edit']}, computed {covers['computed_at']}")
        return dataclasses.replace(rep, recipe=rep.recipe.replace(note=note))

    def caption_part_kept(self, seed: int = 0) -> bool:
        """Whether :meth:`agreement_report` (with this ``seed``) would find its caption part
        kept, at a quick look: a screen can show the label numbers first when it will not."""
        return self.peers.results.has("captions", _caption_settings(seed))

    def _caption_part(self, leads: set[str], captions: bool, seed: int, cache: bool
                      ) -> tuple[CaptionPart, dict | None]:
        """The caption part of the report, and what the cache entry covers when it came from
        the result cache (None when computed now)."""
        def compute() -> CaptionPart:
            rows = [r for r in self.peers.annotation.captions() if r[1] not in leads] if captions else None
            return caption_part(rows, seed=seed, overlap_clips=OVERLAP_CLIPS)
        if not (captions and cache):
            return compute(), None
        return self.peers.results.cached("captions", _caption_settings(seed), compute)

    def _clip_frames(self) -> tuple[dict[int, float], dict[int, int]]:
        """{clip: fps} and {clip: frame count} of every clip, read as two plain columns."""
        def q(s: Session) -> tuple[dict[int, float], dict[int, int]]:
            rows = s.execute(select(Clip.id, Clip.fps, Clip.frame_count)).all()
            return {c: f for c, f, _ in rows}, {c: n for c, _, n in rows}
        return self.ctx.read(q)

    def known_answers(self) -> dict:
        """{clip: answer} of the check clips (empty where there are none, and for anyone but
        a lead: annotators are not told which clips are check clips)."""
        return self.peers.checks.known_answers()

    def _voting_labels(self, leads: set[str]) -> list[tuple[int, str, str]]:
        """Annotator labels that count as votes: not a lead's, and not left on a clip its
        annotator skipped (a skip is no label, whatever was clicked before it)."""
        skipped = {(c, a) for c, a, _ in self.peers.review.skips()}
        return [r for r in self.peers.annotation.clip_labels() if r[1] not in leads and r[:2] not in skipped]

    def agreement_inputs(self) -> dict[str, Any]:
        """The rows the report is computed from (for scripts that call the engine directly)."""
        leads = {a.name for a in self.peers.catalog.annotators() if a.role == "lead"}
        return {
            "labels": self._voting_labels(leads),
            "segments": [(g.clip, g.annotator, g.label, g.start, g.end) for g in self.peers.annotation.segments()
                         if g.annotator not in leads],
            "captions": [r for r in self.peers.annotation.captions() if r[1] not in leads],
        }


def _caption_settings(seed: int) -> dict[str, Any]:
    """What the kept caption part depends on besides the captions (its result-cache settings)."""
    return {"seed": seed, "overlap_clips": OVERLAP_CLIPS}
