"""Team mode: logins per person, assignment with overlap, pulling the next clip, leases,
blind mode and the lead-only export check.

The same methods work on SQLite (solo or a few processes on one machine: ``BEGIN IMMEDIATE``
serialises writers) and on PostgreSQL, where who may see what is enforced by the database
(see :mod:`clipscribe.store.team`); where they differ, ``ctx.is_server`` decides.
"""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

import numpy as np
from sqlalchemy import exists, func, select, text, update
from sqlalchemy.orm import Session

from ..errors import NotALeadError, PermissionRefused, RecordError
from ..store import team
from ..store.models import (
    ROLES,
    Annotator,
    Assignment,
    Caption,
    CheckClip,
    Clip,
    Edit,
    Setting,
    utcnow,
)
from ..types import AssignmentPlan  # noqa: F401 (re-exported)
from .context import Service, require, row_dict

DEFAULT_LEASE_S = 2 * 3600.0

#: the old name of :class:`clipscribe.errors.PermissionRefused`, kept for scripts using it
TeamPermissionError = PermissionRefused


def overlap_selection(clip_ids: list[int], overlap: float, seed: int) -> list[int]:
    """The clips that get several annotators: a seeded permutation of the sorted clip ids,
    first ``floor(overlap * n + 0.5)`` of them (numpy's PCG64 stream is stable across
    versions for ``default_rng(seed).permutation``), returned sorted."""
    ids = sorted(clip_ids)
    k = int(math.floor(overlap * len(ids) + 0.5))
    order = np.random.default_rng(seed).permutation(len(ids))[:k]
    return sorted(ids[i] for i in order.tolist())


class Team(Service):
    # ---- people and logins ------------------------------------------------------------
    def check_login_name(self, name: str) -> None:
        """RecordError when ``name`` cannot become a server login (too long, reserved)."""
        try:
            team.login_name(name)
        except ValueError as exc:
            raise RecordError(str(exc)) from None

    def require_full_view(self, what: str) -> None:
        """Refuse ``what`` (a report over everyone's work) to a login the server shows only
        its own work: an annotator in blind mode. Solo projects see everything."""
        if not self.ctx.is_server:
            return
        if self.ctx.read(lambda s: bool(s.scalar(text("SELECT clipscribe_is_lead()")))):
            return
        if self.blind_mode():
            raise TeamPermissionError(
                f"{self.ctx.user!r} is an annotator and blind mode is on: {what} needs every "
                "annotator's work, which the server shows only to leads; ask a lead for it")

    def give_login(self, s: Session, row: Annotator, password: str | None) -> None:
        """On a server, the database login of a person just added (see add_annotator)."""
        me = team.current_login(s.connection())
        if password is None:
            # The admin who created the project is its first lead; nobody else gets a login
            # without a password (add one later with set_password).
            if row.role == "lead" and s.scalar(select(Annotator.id).where(Annotator.db_login == me)) is None:
                row.db_login = me
                s.merge(Setting(key=team.BLIND_KEY, value=bool(self.ctx.settings.blind)))
                s.flush()
            return
        row.db_login = self._make_login(s, row.name, row.role, password)
        s.flush()

    def _make_login(self, s: Session, name: str, role: str, password: str) -> str:
        try:
            login = team.login_name(name)
        except ValueError as exc:
            raise RecordError(str(exc)) from None
        if team.role_exists(s.connection(), login):
            raise RecordError(f"{name!r}: the server already has a login {login!r}; "
                              "choose another name or use set_password for this person")
        try:
            team.create_login(s.connection(), login, password, role)
        except ValueError as exc:
            raise RecordError(f"{name!r}: {exc}") from None
        except PermissionError as exc:
            raise TeamPermissionError(f"{name!r}: the server refused to make a login ({exc}); "
                                      "making logins needs CREATEROLE (the admin)") from None
        return login

    def set_password(self, name: str, password: str) -> str:
        """Give a person a login (or a new password); returns the login name. Server only;
        the connected login needs CREATEROLE (the admin)."""
        require(self.ctx.is_server, "logins exist only in server projects")
        def work(s: Session) -> str:
            row = self.ctx.annotator(s, name)
            if row.name != self.ctx.user:  # one's own password: anyone; another's: leads
                self.ctx.lead_only(s, "set another person's password")
            if row.db_login and team.role_exists(s.connection(), row.db_login):
                try:
                    team.set_password(s.connection(), row.db_login, password)
                except PermissionError as exc:
                    raise TeamPermissionError(
                        f"{row.name!r}: the server refused the new password ({exc}); setting "
                        "another login's password needs CREATEROLE (the admin)") from None
                return row.db_login
            row.db_login = self._make_login(s, row.name, row.role, password)
            self.ctx.log(s, "login", "annotator", row.id, None, None, {"db_login": row.db_login})
            return row.db_login
        return self.ctx.write(work)

    def set_role(self, name: str, role: str) -> None:
        """Make a person an annotator or a lead. Lead only; the last lead stays a lead.
        Setting the role a person already has changes nothing. On a server their login (if
        they have one) moves to the matching group role in the same transaction; the
        connected login needs CREATEROLE (the admin) for that."""
        require(role in ROLES, f"annotator {name!r}: role must be one of {', '.join(ROLES)}, not {role!r}")
        def work(s: Session) -> None:
            self._team_lead(s, "change roles")
            row = self.ctx.annotator(s, name)
            if row.role == role:
                return
            # the lead rows stay locked to the end, so two leads demoting each other at once
            # on a server cannot leave none
            leads = s.scalars(select(Annotator.id).where(Annotator.role == "lead").with_for_update()).all()
            if row.role == "lead" and len(leads) <= 1:
                raise RecordError(f"annotator {row.name!r}: the only lead; at least one lead must remain")
            before = row_dict(row)
            row.role = role
            s.flush()
            self._move_login(s, row)
            self.ctx.log(s, "set", "annotator", row.id, None, before, row_dict(row))
        self.ctx.write(work)

    def _move_login(self, s: Session, row: Annotator) -> None:
        """On a server, put the person's login into the group of their (new) role. Leads are
        told apart by group membership and the annotators row together, so both change."""
        if not self.ctx.is_server or not row.db_login or not team.role_exists(s.connection(), row.db_login):
            return  # no login yet: set_password later creates it in the right group
        if row.role != "lead" and row.db_login == team.database_owner(s.connection()):
            raise RecordError(f"annotator {row.name!r}: their login {row.db_login!r} owns the "
                              "project's database and passes every check as a lead; it stays a lead")
        try:
            team.move_group(s.connection(), row.db_login, row.role)
        except PermissionError as exc:
            raise TeamPermissionError(f"{row.name!r}: the server refused to move login "
                                      f"{row.db_login!r} ({exc}); changing roles needs a login "
                                      "with CREATEROLE, such as the admin") from None
        except ValueError as exc:
            raise RecordError(f"{row.name!r}: {exc}") from None

    def _team_lead(self, s: Session, what: str) -> Annotator:
        return self.ctx.require_lead(s, what)

    # ---- blind mode and lease (settings rows in the database) -------------------------
    def set_blind(self, blind: bool) -> None:
        """Blind mode on: annotators cannot read each other's labels, segments or captions."""
        def work(s: Session) -> None:
            self._team_lead(s, "change blind mode")
            before = s.get(Setting, team.BLIND_KEY)
            s.merge(Setting(key=team.BLIND_KEY, value=bool(blind)))
            self.ctx.log(s, "set", "setting", None, None,
                      {"blind": before.value} if before else None, {"blind": bool(blind)})
        # the settings file and the database change together or not at all
        self.ctx.update_settings(blind=bool(blind), together_with=lambda: self.ctx.write(work))

    def blind_mode(self) -> bool:
        row = self.ctx.read(lambda s: s.get(Setting, team.BLIND_KEY))
        return bool(row.value) if row is not None else bool(self.ctx.settings.blind)

    def set_lease(self, hours: float) -> None:
        """How long a pulled clip stays reserved without any edit before it returns to the pool."""
        require(hours > 0, f"lease {hours!r}: must be positive hours")
        def work(s: Session) -> None:
            self._team_lead(s, "set the lease")
            s.merge(Setting(key=team.LEASE_KEY, value=float(hours) * 3600.0))
        self.ctx.write(work)

    def lease_seconds(self) -> float:
        row = self.ctx.read(lambda s: s.get(Setting, team.LEASE_KEY))
        return float(row.value) if row is not None else DEFAULT_LEASE_S

    # ---- assignment -------------------------------------------------------------------
    def assign(self, *, per_clip: int = 1, overlap: float = 0.0, overlap_count: int = 3,
               seed: int = 0, check_rate: float | None = None) -> AssignmentPlan:
        """Set how many people annotate each clip: a fraction ``overlap`` of the clips (chosen
        by ``seed``, see :func:`overlap_selection`) gets ``overlap_count``, the rest
        ``per_clip``. Settled clips are left out. ``check_rate`` (0..1; None keeps the one
        set before) is the share of each annotator's clips that are check clips: the queue
        hands them the next check clip they have not had whenever one more keeps their
        share at most the rate (``checks + 1 <= check_rate x (clips had + 1)``; at 0.25 their
        4th, 8th, … clip). Check clips go out this way only, to everyone, never through the
        places above. Lead only."""
        require(check_rate is None or 0.0 <= check_rate <= 1.0,
                f"check_rate {check_rate!r}: must lie in [0, 1]")
        require(isinstance(per_clip, int) and per_clip >= 1, f"per_clip {per_clip!r}: must be >= 1")
        require(0.0 <= overlap <= 1.0, f"overlap {overlap!r}: must lie in [0, 1]")
        require(isinstance(overlap_count, int) and overlap_count >= 1,
                f"overlap_count {overlap_count!r}: must be >= 1")
        def work(s: Session) -> AssignmentPlan:
            self._team_lead(s, "plan assignments")
            ids = list(s.scalars(select(Clip.id).where(Clip.state != "settled").order_by(Clip.id)))
            chosen = overlap_selection(ids, overlap, seed)
            s.execute(update(Clip).where(Clip.state != "settled").values(annotators_wanted=per_clip))
            for i in range(0, len(chosen), 500):
                s.execute(update(Clip).where(Clip.id.in_(chosen[i:i + 500]))
                          .values(annotators_wanted=overlap_count))
            plan = AssignmentPlan(len(ids), len(chosen), per_clip, float(overlap), overlap_count, seed)
            if check_rate is not None:
                s.merge(Setting(key=team.CHECK_RATE_KEY, value=float(check_rate)))
            before = s.get(Setting, team.PLAN_KEY)
            s.merge(Setting(key=team.PLAN_KEY, value=plan.recipe()))
            self.ctx.log(s, "plan", "assignment_plan", None, None,
                      before.value if before else None, plan.recipe())
            return plan
        return self.ctx.write(work)

    def check_rate(self) -> float:
        """Share of each annotator's clips that are check clips (0: none handed out)."""
        row = self.ctx.read(lambda s: s.get(Setting, team.CHECK_RATE_KEY))
        return float(row.value) if row is not None else 0.0

    def assignment_plan(self) -> dict[int, int]:
        """clip id -> number of people wanted (clips never planned count as one)."""
        return self.ctx.read(lambda s: {cid: n or 1 for cid, n in s.execute(
            select(Clip.id, Clip.annotators_wanted).order_by(Clip.id))})

    def next_clip(self, annotator: Any = None) -> int | None:
        """Reserve and return the next clip for ``annotator`` (default: the current user),
        or None when nothing is left. Their own open clip comes first; otherwise the lowest
        clip id that still needs people and that they have not had. Abandoned leases
        (open, no edit by that person on that clip within the lease) expire first."""
        lease = self.lease_seconds()
        if self.ctx.is_server:
            def pull(s: Session) -> int | None:
                me = self.ctx.annotator(s, annotator)
                return s.scalar(text("SELECT clipscribe_pull(:a, :l)"), {"a": me.id, "l": lease})
            return self.ctx.write(pull)
        return self.ctx.write(lambda s: self._pull_here(s, self.ctx.annotator(s, annotator), lease))

    def expire_assignments(self) -> int:
        """Return abandoned leases to the pool now; returns how many expired. (Pulling does
        this too.) On a server, a lead sees every lease; an annotator only their own."""
        lease = self.lease_seconds()
        return self.ctx.write(lambda s: self._expire(s, utcnow(), lease))

    def _pull_here(self, s: Session, me: Annotator, lease: float) -> int | None:
        now = utcnow()
        self._expire(s, now, lease)
        until = now + dt.timedelta(seconds=lease)
        mine = s.scalar(select(Assignment).where(Assignment.annotator_id == me.id, Assignment.state == "open")
                        .order_by(Assignment.assigned_at, Assignment.id).limit(1))
        if mine is not None:
            mine.expires_at = until
            return mine.clip_id
        clip = self._next_check_clip(s, me) or s.scalar(
            self.wanting(me).order_by(Clip.id).limit(1).with_for_update(skip_locked=True))
        if clip is None:
            return None
        self.reserve(s, clip, me, now, until)
        return clip.id

    @staticmethod
    def wanting(me: Annotator):
        """The clips that still need people, that ``me`` has not had and that are not check
        clips (those come at the check rate only): a select of Clip."""
        live = (select(func.count()).select_from(Assignment)
                .where(Assignment.clip_id == Clip.id, Assignment.state.not_in(("expired", "skipped")))
                .scalar_subquery())
        had = exists().where(Assignment.clip_id == Clip.id, Assignment.annotator_id == me.id)
        is_check = exists().where(CheckClip.clip_id == Clip.id)
        return select(Clip).where(Clip.state != "settled", ~had, ~is_check,
                                  live < func.coalesce(Clip.annotators_wanted, 1))

    @staticmethod
    def reserve(s: Session, clip: Clip, me: Annotator, now: dt.datetime,
                until: dt.datetime | None) -> None:
        """An open assignment of ``clip`` to ``me`` from ``now`` (lease until ``until``)."""
        s.add(Assignment(clip_id=clip.id, annotator_id=me.id, state="open", assigned_at=now,
                         expires_at=until, updated_at=now))
        if clip.state == "new":
            clip.state = "in_progress"
        s.flush()

    def _next_check_clip(self, s: Session, me: Annotator) -> Clip | None:
        """The check clip due for ``me`` at the check rate, if any (as ``clipscribe_pull``
        decides it on a server)."""
        rate = s.get(Setting, team.CHECK_RATE_KEY)
        rate = float(rate.value) if rate is not None else 0.0
        if rate <= 0:
            return None
        mine = (select(Assignment.clip_id).where(Assignment.annotator_id == me.id,
                                                 Assignment.state != "expired"))
        had = s.scalar(select(func.count()).select_from(mine.subquery())) or 0
        checks = s.scalar(select(func.count()).select_from(
            mine.where(Assignment.clip_id.in_(select(CheckClip.clip_id))).subquery())) or 0
        if checks + 1 > rate * (had + 1) + 1e-9:  # one more would pass the rate
            return None
        ever = exists().where(Assignment.clip_id == CheckClip.clip_id,
                              Assignment.annotator_id == me.id)
        cid = s.scalar(select(CheckClip.clip_id).where(~ever).order_by(CheckClip.clip_id).limit(1))
        return s.get(Clip, cid) if cid is not None else None

    def _expire(self, s: Session, now: dt.datetime, lease: float) -> int:
        cutoff = now - dt.timedelta(seconds=lease)
        recent = exists().where(Edit.clip_id == Assignment.clip_id,
                                Edit.annotator_id == Assignment.annotator_id, Edit.at > cutoff)
        stale = list(s.scalars(select(Assignment).where(
            Assignment.state == "open", Assignment.expires_at.is_not(None),
            Assignment.expires_at < now, ~recent)))
        for a in stale:
            before = {"state": a.state, "annotator_id": a.annotator_id}
            a.state, a.updated_at = "expired", now
            s.flush()
            s.add(Edit(at=now, annotator_id=None, action="expire", entity="assignment_lease",
                       entity_id=a.id, clip_id=a.clip_id, before=before,
                       after={"state": "expired", "annotator_id": a.annotator_id}))
            self.peers.annotation._refresh_clip_state(s, s.get(Clip, a.clip_id))
        s.flush()
        return len(stale)

    # ---- conflict-aware edits -----------------------------------------------------------
    def caption_version(self, caption_id: int) -> int:
        row = self.ctx.read(lambda s: s.get(Caption, caption_id))
        require(row is not None, f"caption {caption_id}: no such caption")
        return row.version

    # ---- export -----------------------------------------------------------------------
    def require_export_right(self) -> None:
        """Only leads export: the one lead check (:meth:`Context.lead_only`); on a server the
        database decides too (``clipscribe_is_lead()``, by the login)."""
        self.ctx.check_lead("export")
        if self.ctx.is_server and not self.ctx.read(
                lambda s: bool(s.scalar(text("SELECT clipscribe_is_lead()")))):
            raise NotALeadError(f"{self.ctx.user!r} is not a lead: only leads export")
