"""Team mode: logins per person, assignment with overlap, pulling the next clip, leases,
conflict-aware edits of captions and gold, and the lead-only export check.

The same methods work on SQLite (solo or a few processes on one machine: ``BEGIN IMMEDIATE``
serialises writers) and on PostgreSQL, where who may see what is enforced by the database
(see :mod:`clipscribe.store.team`).
"""

from __future__ import annotations

import datetime as dt
import math
import time
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, TypeVar

import numpy as np
from sqlalchemy import exists, func, select, text, update
from sqlalchemy.exc import DataError, DBAPIError, IntegrityError
from sqlalchemy.orm import Session
from sqlalchemy.orm.attributes import set_committed_value

from ..errors import PermissionRefused, RecordError, ServerBusyError, StaleWriteError
from ..store import team
from ..store.models import ROLES, Annotator, Assignment, Caption, Clip, Edit, GoldLabel, Setting, utcnow
from .base import require, row_dict
from ..types import AssignmentPlan  # noqa: F401 (re-exported)

T = TypeVar("T")
DEFAULT_LEASE_S = 2 * 3600.0
#: SQLSTATEs worth running the whole transaction again for (serialization failure, deadlock)
_RETRY_STATES = ("40001", "40P01")
_DENIED = "42501"
#: lock not available (lock_timeout), query cancelled (statement_timeout)
_BUSY_STATES = ("55P03", "57014")


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


class TeamMixin:
    # ---- transactions on a server -----------------------------------------------------
    def _write(self, fn: Callable[[Session], T]) -> T:
        if not self.is_server:
            return super()._write(fn)
        for attempt in range(6):
            try:
                return super()._write(fn)
            except DBAPIError as exc:
                code = getattr(exc.orig, "sqlstate", None)
                if code in _RETRY_STATES and attempt < 5:
                    time.sleep(0.02 * (2 ** attempt))
                    continue
                self._raise_server_refusal(exc)
                raise
        raise AssertionError("unreachable")

    def _read(self, fn: Callable[[Session], T]) -> T:
        try:
            return super()._read(fn)
        except DBAPIError as exc:
            self._raise_server_refusal(exc)
            raise

    def _raise_server_refusal(self, exc: DBAPIError) -> None:
        """A refusal by the server as one clear line (never the SQL or its parameters):
        no right -> TeamPermissionError; a lock not granted in time or a time limit ->
        ServerBusyError naming who holds strong locks; a value the server cannot store ->
        RecordError."""
        _raise_denied(exc)
        code = getattr(exc.orig, "sqlstate", None) or ""
        first = str(exc.orig).strip().splitlines()[0] if exc.orig else str(exc)
        if code in _BUSY_STATES:
            why = "a lock was not granted in time" if code == "55P03" else "a time limit was reached"
            raise ServerBusyError(f"the server is busy ({self._lock_holders()}): {why}; "
                                  "nothing was saved, try again in a moment") from None
        if code.startswith("22") or isinstance(exc, DataError):  # psycopg's own: no code
            raise RecordError(f"the server refused a value: {first}") from None

    def _lock_holders(self) -> str:
        """Who holds table locks that stop other writers in this database, as far as the
        server shows it to this login (login names and tables, never their statements)."""
        try:
            with self.engine.connect() as conn:
                rows = conn.execute(text(
                    "SELECT DISTINCT a.usename, c.relname FROM pg_catalog.pg_locks l "
                    "JOIN pg_catalog.pg_stat_activity a ON a.pid = l.pid "
                    "LEFT JOIN pg_catalog.pg_class c ON c.oid = l.relation "
                    "WHERE l.granted AND l.locktype = 'relation' AND l.pid <> pg_backend_pid() "
                    "AND l.database = (SELECT oid FROM pg_catalog.pg_database "
                    "                  WHERE datname = current_database()) "
                    "AND l.mode IN ('ShareLock', 'ShareRowExclusiveLock', 'ExclusiveLock', "
                    "               'AccessExclusiveLock') ORDER BY 1, 2")).all()
        except Exception:  # noqa: BLE001 - the message matters more than the detail
            rows = []
        if not rows:
            return "locked by another session"
        return "locked by " + ", ".join(f"{who or 'another login'} on {rel or 'a table'}"
                                        for who, rel in rows[:3])

    # ---- people and logins ------------------------------------------------------------
    def add_annotator(self, name: str, role: str = "annotator", password: str | None = None, *,
                      exist_ok: bool = False) -> int:
        """As :meth:`CatalogMixin.add_annotator`; on a server, a name that cannot become a
        login (too long, reserved) is refused before anything is written."""
        if self.is_server and password is not None and (name or "").strip():
            try:
                team.login_name(name)
            except ValueError as exc:
                raise RecordError(str(exc)) from None
        return super().add_annotator(name, role, password, exist_ok=exist_ok)

    def require_full_view(self, what: str) -> None:
        """Refuse ``what`` (a report over everyone's work) to a login the server shows only
        its own work: an annotator in blind mode. Solo projects see everything."""
        if not self.is_server:
            return
        if self._read(lambda s: bool(s.scalar(text("SELECT clipscribe_is_lead()")))):
            return
        if self.blind_mode():
            raise TeamPermissionError(
                f"{self.user!r} is an annotator and blind mode is on: {what} needs every "
                "annotator's work, which the server shows only to leads; ask a lead for it")

    def _after_add_annotator(self, s: Session, row: Annotator, password: str | None) -> None:
        super()._after_add_annotator(s, row, password)
        if not self.is_server:
            return
        me = team.current_login(s.connection())
        if password is None:
            # The admin who created the project is its first lead; nobody else gets a login
            # without a password (add one later with set_password).
            if row.role == "lead" and s.scalar(select(Annotator.id).where(Annotator.db_login == me)) is None:
                row.db_login = me
                s.merge(Setting(key=team.BLIND_KEY, value=bool(self.settings.blind)))
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
        require(self.is_server, "logins exist only in server projects")
        def work(s: Session) -> str:
            row = self._annotator(s, name)
            if row.db_login and team.role_exists(s.connection(), row.db_login):
                try:
                    team.set_password(s.connection(), row.db_login, password)
                except PermissionError as exc:
                    raise TeamPermissionError(
                        f"{row.name!r}: the server refused the new password ({exc}); setting "
                        "another login's password needs CREATEROLE (the admin)") from None
                return row.db_login
            row.db_login = self._make_login(s, row.name, row.role, password)
            self._log(s, "login", "annotator", row.id, None, None, {"db_login": row.db_login})
            return row.db_login
        return self._write(work)

    def set_role(self, name: str, role: str) -> None:
        """Make a person an annotator or a lead. Lead only; the last lead stays a lead.
        Setting the role a person already has changes nothing. On a server their login (if
        they have one) moves to the matching group role in the same transaction; the
        connected login needs CREATEROLE (the admin) for that."""
        require(role in ROLES, f"annotator {name!r}: role must be one of {', '.join(ROLES)}, not {role!r}")
        def work(s: Session) -> None:
            self._team_lead(s, "change roles")
            row = self._annotator(s, name)
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
            self._log(s, "set", "annotator", row.id, None, before, row_dict(row))
        self._write(work)

    def _move_login(self, s: Session, row: Annotator) -> None:
        """On a server, put the person's login into the group of their (new) role. Leads are
        told apart by group membership and the annotators row together, so both change."""
        if not self.is_server or not row.db_login or not team.role_exists(s.connection(), row.db_login):
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
        who = self._annotator(s, None)
        if who.role != "lead":
            raise TeamPermissionError(f"{who.name!r} is not a lead: only leads {what}")
        return who

    # ---- blind mode and lease (settings rows in the database) -------------------------
    def set_blind(self, blind: bool) -> None:
        """Blind mode on: annotators cannot read each other's labels, segments or captions."""
        def work(s: Session) -> None:
            self._team_lead(s, "change blind mode")
            before = s.get(Setting, team.BLIND_KEY)
            s.merge(Setting(key=team.BLIND_KEY, value=bool(blind)))
            self._log(s, "set", "setting", None, None,
                      {"blind": before.value} if before else None, {"blind": bool(blind)})
        # the settings file and the database change together or not at all
        self.update_settings(blind=bool(blind), together_with=lambda: self._write(work))

    def blind_mode(self) -> bool:
        row = self._read(lambda s: s.get(Setting, team.BLIND_KEY))
        return bool(row.value) if row is not None else bool(self.settings.blind)

    def set_lease(self, hours: float) -> None:
        """How long a pulled clip stays reserved without any edit before it returns to the pool."""
        require(hours > 0, f"lease {hours!r}: must be positive hours")
        def work(s: Session) -> None:
            self._team_lead(s, "set the lease")
            s.merge(Setting(key=team.LEASE_KEY, value=float(hours) * 3600.0))
        self._write(work)

    def lease_seconds(self) -> float:
        row = self._read(lambda s: s.get(Setting, team.LEASE_KEY))
        return float(row.value) if row is not None else DEFAULT_LEASE_S

    # ---- assignment -------------------------------------------------------------------
    def assign(self, *, per_clip: int = 1, overlap: float = 0.0, overlap_count: int = 3,
               seed: int = 0) -> AssignmentPlan:
        """Set how many people annotate each clip: a fraction ``overlap`` of the clips (chosen
        by ``seed``, see :func:`overlap_selection`) gets ``overlap_count``, the rest
        ``per_clip``. Settled clips are left out. Lead only."""
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
            before = s.get(Setting, team.PLAN_KEY)
            s.merge(Setting(key=team.PLAN_KEY, value=plan.recipe()))
            self._log(s, "plan", "assignment_plan", None, None,
                      before.value if before else None, plan.recipe())
            return plan
        return self._write(work)

    def assignment_plan(self) -> dict[int, int]:
        """clip id -> number of people wanted (clips never planned count as one)."""
        return self._read(lambda s: {cid: n or 1 for cid, n in s.execute(
            select(Clip.id, Clip.annotators_wanted).order_by(Clip.id))})

    def next_clip(self, annotator: Any = None) -> int | None:
        """Reserve and return the next clip for ``annotator`` (default: the current user),
        or None when nothing is left. Their own open clip comes first; otherwise the lowest
        clip id that still needs people and that they have not had. Abandoned leases
        (open, no edit by that person on that clip within the lease) expire first."""
        lease = self.lease_seconds()
        if self.is_server:
            def pull(s: Session) -> int | None:
                me = self._annotator(s, annotator)
                return s.scalar(text("SELECT clipscribe_pull(:a, :l)"), {"a": me.id, "l": lease})
            return self._write(pull)
        return self._write(lambda s: self._pull_here(s, self._annotator(s, annotator), lease))

    def expire_assignments(self) -> int:
        """Return abandoned leases to the pool now; returns how many expired. (Pulling does
        this too.) On a server, a lead sees every lease; an annotator only their own."""
        lease = self.lease_seconds()
        return self._write(lambda s: self._expire(s, utcnow(), lease))

    def _pull_here(self, s: Session, me: Annotator, lease: float) -> int | None:
        now = utcnow()
        self._expire(s, now, lease)
        until = now + dt.timedelta(seconds=lease)
        mine = s.scalar(select(Assignment).where(Assignment.annotator_id == me.id, Assignment.state == "open")
                        .order_by(Assignment.assigned_at, Assignment.id).limit(1))
        if mine is not None:
            mine.expires_at = until
            return mine.clip_id
        live = (select(func.count()).select_from(Assignment)
                .where(Assignment.clip_id == Clip.id, Assignment.state.not_in(("expired", "skipped")))
                .scalar_subquery())
        had = exists().where(Assignment.clip_id == Clip.id, Assignment.annotator_id == me.id)
        clip = s.scalar(select(Clip).where(Clip.state != "settled", ~had,
                                           live < func.coalesce(Clip.annotators_wanted, 1))
                        .order_by(Clip.id).limit(1).with_for_update(skip_locked=True))
        if clip is None:
            return None
        s.add(Assignment(clip_id=clip.id, annotator_id=me.id, state="open", assigned_at=now,
                         expires_at=until, updated_at=now))
        if clip.state == "new":
            clip.state = "in_progress"
        s.flush()
        return clip.id

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
            self._refresh_clip_state(s, s.get(Clip, a.clip_id))
        s.flush()
        return len(stale)

    def _refresh_clip_state(self, s: Session, c: Clip) -> None:
        """On a server an annotator's login sees only its own assignments and may not write
        ``clips.state``: the database works the state out from everyone's assignments and
        writes it (``clipscribe_refresh_clip_state``, for a clip the caller has an
        assignment on); the loaded row takes the result without writing it again."""
        if not self.is_server:
            return super()._refresh_clip_state(s, c)
        s.flush()
        state = s.scalar(text("SELECT clipscribe_refresh_clip_state(:c)"), {"c": c.id})
        set_committed_value(c, "state", state)

    def _touch(self, s: Session, c: Clip, a: Annotator) -> Assignment:
        if not self.is_server or c.state != "new":
            return super()._touch(s, c, a)
        set_committed_value(c, "state", "in_progress")  # written by the database below
        row = super()._touch(s, c, a)
        self._refresh_clip_state(s, c)
        return row

    # ---- conflict-aware edits -----------------------------------------------------------
    def caption_version(self, caption_id: int) -> int:
        row = self._read(lambda s: s.get(Caption, caption_id))
        require(row is not None, f"caption {caption_id}: no such caption")
        return row.version

    def update_caption(self, caption_id: int, text: str | None = None, *,
                       segment: Any = ..., expected_version: int | None = None) -> int:
        """As :meth:`AnnotateMixin.update_caption`; a refused write raises StaleWriteError with
        ``kept_text`` (yours, not saved), ``current_text`` and ``current_version`` attached
        (both None when it was deleted)."""
        try:
            return super().update_caption(caption_id, text, segment=segment,
                                          expected_version=expected_version)
        except StaleWriteError as exc:
            self._attach_stored_caption(exc, caption_id, text)
            raise

    def delete_caption(self, caption_id: int, *, expected_version: int | None = None) -> None:
        """As :meth:`AnnotateMixin.delete_caption`; a refused delete raises StaleWriteError with
        ``current_text`` and ``current_version`` attached (both None when it was deleted)."""
        try:
            super().delete_caption(caption_id, expected_version=expected_version)
        except StaleWriteError as exc:
            self._attach_stored_caption(exc, caption_id, None)
            raise

    def _attach_stored_caption(self, exc: StaleWriteError, caption_id: int, kept: str | None) -> None:
        cur = self._read(lambda s: s.get(Caption, caption_id))
        exc.kept_text = kept
        exc.current_text = cur.text if cur is not None else None
        exc.current_version = cur.version if cur is not None else None
        exc.deleted = cur is None

    def gold_label_version(self, clip: Any) -> int:
        """Version of a clip's gold label; 0 when it has none yet."""
        def q(s: Session) -> int:
            row = s.scalar(select(GoldLabel).where(GoldLabel.clip_id == self._clip(s, clip).id))
            return row.version if row is not None else 0
        return self._read(q)

    def set_gold_label(self, clip: Any, label: str | None, *, lead: Any = None,
                       expected_version: int | None = None) -> None:
        """Settle a clip's label. With ``expected_version`` (from :meth:`gold_label_version`)
        a gold label another lead changed meanwhile raises StaleWriteError (``kept_value`` is
        your label, ``current_value`` theirs) instead of being overwritten."""
        if expected_version is None:
            return super().set_gold_label(clip, label, lead=lead)
        def work(s: Session) -> None:
            c = self._clip(s, clip)
            row = s.scalar(select(GoldLabel).where(GoldLabel.clip_id == c.id).with_for_update(of=GoldLabel))
            now = row.version if row is not None else 0
            if now != expected_version:
                raise _gold_conflict(c.id, label, row.label.name if row else None, now, expected_version)
            try:
                self._set_gold_label(s, c, label, lead)
            except IntegrityError:  # another lead created it first
                raise _gold_conflict(c.id, label, None, None, expected_version) from None
        self._write(work)

    # ---- export -----------------------------------------------------------------------
    def require_export_right(self) -> None:
        """Only leads export. On a server the database decides (``clipscribe_is_lead()``)."""
        if self.is_server:
            ok = self._read(lambda s: bool(s.scalar(text("SELECT clipscribe_is_lead()"))))
        else:
            ok = self.user is None or self.role(self.user) in (None, "lead")
        if not ok:
            raise TeamPermissionError(f"{self.user!r} is not a lead: only leads export")

    def export_records(self, path: Any) -> int:
        self.require_export_right()
        return super().export_records(path)

    def export_labels_csv(self, path: Any) -> int:
        self.require_export_right()
        return super().export_labels_csv(path)

    # ---- moving onto a server -----------------------------------------------------------
    @classmethod
    def move_to_server(cls, folder: Any, url: str, *, lead: str | None = None):
        """Copy a solo SQLite project onto an empty PostgreSQL database and point the folder
        at it; see :func:`clipscribe.project_parts.team_move.move_to_server`."""
        from .team_move import move_to_server
        return move_to_server(cls, folder, url, lead=lead)


def _gold_conflict(clip_id: int, mine: str | None, theirs: str | None, now: int | None,
                   expected: int) -> StaleWriteError:
    return StaleWriteError(
        f"clip {clip_id}: another lead changed the gold label (now {theirs!r}, version {now}; "
        f"you edited version {expected}); your label {mine!r} was not saved",
        kept_value=mine, current_value=theirs, current_version=now)


def _raise_denied(exc: DBAPIError) -> None:
    if getattr(exc.orig, "sqlstate", None) == _DENIED:
        first = str(exc.orig).strip().splitlines()[0] if exc.orig else str(exc)
        raise TeamPermissionError(f"the database refused this for your login: {first}") from None
