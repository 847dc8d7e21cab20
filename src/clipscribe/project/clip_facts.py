"""Clip facts after ingest: a clip's group, consent, licence and source, changed by a lead as
edits in the history (undone like other edits)."""

from __future__ import annotations

from typing import Any

from sqlalchemy.orm import Session

from ..errors import RecordError
from ..schema.records import ClipRecord
from ..store.models import Clip
from ..types import ClipRef
from .context import Service, row_dict

#: the facts of a clip that may change after ingest: argument name -> column
FACTS = {"group": "group_key", "consent": "consent", "licence": "licence", "source": "source"}
#: "not given": leave that fact as it is (None sets it to unknown)
KEEP: Any = ...


class ClipFacts(Service):
    def set_clip_facts(self, clip: ClipRef, **facts: Any) -> bool:
        """Change the facts given (``group``, ``consent``, ``licence``, ``source``; None makes a
        fact unknown, a clip with no group being its own group). Lead only. One edit in the
        history holding the facts before and after; returns False when nothing changed."""
        given = {k: v for k, v in facts.items() if v is not KEEP}
        unknown = sorted(set(given) - set(FACTS))
        if unknown:
            raise RecordError(f"clip facts: no fact named {', '.join(unknown)} "
                              f"(use {', '.join(FACTS)})")
        _check(given)

        def work(s: Session) -> bool:
            self.ctx.require_lead(s, "change clip facts")
            c = self.ctx.clip(s, clip)
            cols = {FACTS[k]: v for k, v in given.items() if getattr(c, FACTS[k]) != v}
            if not cols:
                return False
            whole = row_dict(c)
            before = {"id": c.id, **{k: whole[k] for k in cols}}
            for col, value in cols.items():
                setattr(c, col, value)
            s.flush()
            self.ctx.log(s, "facts", "clip", c.id, c.id, before, {"id": c.id, **cols})
            return True
        return self.ctx.write(work)


def _check(given: dict[str, Any]) -> None:
    """The same limits as a clip record's (RecordError naming the fact)."""
    from pydantic import ValidationError
    try:
        ClipRecord(clip="x", **given)
    except ValidationError as exc:
        err = exc.errors()[0]
        where = ".".join(str(p) for p in err.get("loc", ())) or "fact"
        raise RecordError(f"clip facts: {where}: {err.get('msg')}") from None
