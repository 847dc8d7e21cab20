"""Check clips: clips whose answer a lead knows in advance, mixed into the annotators' work
(at the rate set with :meth:`~clipscribe.project.team.Team.assign`) to measure each person on
them. Annotators are never told which clips they are: every read and write here is
lead-only, and on a team server the database keeps the table from every other login."""

from __future__ import annotations

from sqlalchemy import select
from sqlalchemy.orm import Session

from ..errors import NotALeadError, RecordError
from ..store.models import Annotator, CheckClip, Clip, GoldLabel, Label
from ..types import ClipRef
from .context import Service, row_dict


class Checks(Service):
    def mark_check_clip(self, clip: ClipRef, answer: str | None = None) -> str:
        """Make ``clip`` a check clip with ``answer`` as its known label (default: the clip's
        gold label; RecordError when it has none). Marking again changes the answer. Returns
        the answer. Lead only."""
        def work(s: Session) -> str:
            self.ctx.lead_only(s, "mark check clips")
            c = self.ctx.clip(s, clip)
            if answer is None:
                gold = s.scalar(select(GoldLabel).where(GoldLabel.clip_id == c.id))
                if gold is None:
                    raise RecordError(f"clip {c.id}: no gold label to take as the known answer; "
                                      "settle it first or give the answer")
                lab = gold.label
            else:
                lab = self.ctx.label(s, answer)
            me = self.ctx.me(s)
            if me is None:  # a project without people yet: nobody to record it under
                raise RecordError("mark check clips: act as a lead of this project")
            self._set(s, c, lab, me)
            return lab.name
        return self.ctx.write(work)

    def _set(self, s: Session, c: Clip, lab: Label, lead: Annotator) -> bool:
        """Write one check clip (in the caller's write); False when it was already so."""
        row = s.scalar(select(CheckClip).where(CheckClip.clip_id == c.id))
        if row is not None and (row.label_id, row.lead_id) == (lab.id, lead.id):
            return False
        before = row_dict(row) if row is not None else None
        if row is None:
            row = CheckClip(clip_id=c.id, label_id=lab.id, lead_id=lead.id)
            s.add(row)
        else:
            row.label_id, row.lead_id = lab.id, lead.id
        s.flush()
        self.ctx.log(s, "set", "check_clip", c.id, c.id, before, row_dict(row))
        return True

    def import_check(self, s: Session, clip: ClipRef, label: str, lead: str) -> int:
        """One check record of a dump (in the import's write): 1 when it changed anything."""
        self.ctx.lead_only(s, "import check clips")
        who = self.ctx.require_lead(s, "mark check clips", lead)
        return int(self._set(s, self.ctx.clip(s, clip), self.ctx.label(s, label), who))

    def unmark_check_clip(self, clip: ClipRef) -> bool:
        """Make ``clip`` an ordinary clip again; False when it was not a check clip. Lead only."""
        def work(s: Session) -> bool:
            self.ctx.lead_only(s, "unmark check clips")
            c = self.ctx.clip(s, clip)
            row = s.scalar(select(CheckClip).where(CheckClip.clip_id == c.id))
            if row is None:
                return False
            before = row_dict(row)
            s.delete(row)
            s.flush()
            self.ctx.log(s, "clear", "check_clip", c.id, c.id, before, None)
            return True
        return self.ctx.write(work)

    def check_clips(self) -> dict[int, str]:
        """{clip id: known answer} of every check clip. Lead only."""
        def q(s: Session) -> dict[int, str]:
            self.ctx.lead_only(s, "see check clips")
            return {r.clip_id: r.label.name
                    for r in s.scalars(select(CheckClip).order_by(CheckClip.clip_id))}
        return self.ctx.read(q)

    def known_answers(self) -> dict[int, str]:
        """:meth:`check_clips` for a lead; {} for anyone else (nothing to tell them)."""
        try:
            return self.check_clips()
        except NotALeadError:
            return {}

    def check_records(self) -> list[tuple[int, str, str]]:
        """(clip id, answer, lead who marked it) of every check clip, for a lead's dump;
        [] for anyone else."""
        def q(s: Session) -> list[tuple[int, str, str]]:
            try:
                self.ctx.lead_only(s, "see check clips")
            except NotALeadError:
                return []
            names = {a.id: a.name for a in s.scalars(select(Annotator))}
            return [(r.clip_id, r.label.name, names[r.lead_id])
                    for r in s.scalars(select(CheckClip).order_by(CheckClip.clip_id))]
        return self.ctx.read(q)
