"""Agreement of a project: feeds the pure agreement engine with the project's rows."""

from __future__ import annotations

from typing import Any

from ..agreement import AgreementReport, agreement_report
from .context import Service


class Analysis(Service):
    def agreement_report(self, *, captions: bool = True, segments: bool = True, seed: int = 0,
                         n_boot: int = 1000, truth_model: str = "full") -> AgreementReport:
        """Labels, segments and captions agreement over every annotator's work (leads' gold
        decisions excluded), with bootstrap confidence intervals resampling clips."""
        self.peers.team.require_full_view("the agreement report")
        leads = {a.name for a in self.peers.catalog.annotators() if a.role == "lead"}
        clips = self.peers.catalog.clips()
        labels = self._voting_labels(leads)
        segs = ([(g.clip, g.annotator, g.label, g.start, g.end) for g in self.peers.annotation.segments()
                 if g.annotator not in leads] if segments else None)
        caps = [r for r in self.peers.annotation.captions() if r[1] not in leads] if captions else None
        return agreement_report(
            labels, segs, caps, label_order=[l.name for l in self.peers.catalog.labels()],
            ordinal=self.peers.catalog.labels_ordinal(), fps={c.id: c.fps for c in clips},
            frame_count={c.id: c.frame_count for c in clips}, seed=seed, n_boot=n_boot,
            label_set_version=f"v{self.peers.catalog.label_set_version()}",
            reliability=True, truth_model=truth_model, known_answers=self.known_answers())

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
