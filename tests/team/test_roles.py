"""Changing a person's role: the rules on both backends (lead only, one lead always left, a
no-op writes nothing, one history row per change), and on a server the login's rights, which
must follow the role on a fresh connection."""

from __future__ import annotations

import psycopg
import pytest

from clipscribe import Project, RecordError
from clipscribe.cli import main
from clipscribe.errors import NotALeadError
from clipscribe.errors import PermissionRefused as TeamPermissionError
from clipscribe.store.team import ANNOTATOR_GROUP, LEAD_GROUP

from .conftest import add_clips, connect_as

BACKENDS = ["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)]


@pytest.fixture(params=BACKENDS)
def project(request, tmp_path):
    """Lead ``boss`` (on a server: the admin login) and annotator ``ann`` without a login."""
    if request.param == "postgres":
        p = request.getfixturevalue("server_project")
    else:
        p = Project.create(tmp_path / "solo", user="boss")
    p.add_annotator("ann")
    yield p
    p.close()


def _roles(p: Project) -> dict[str, str]:
    return {a.name: a.role for a in p.annotators()}


def ids_of(p: Project) -> dict[str, int]:
    return {a.name: a.id for a in p.annotators()}


def _without_role(row: dict) -> dict:
    return {k: v for k, v in row.items() if k != "role"}


# ---- the rules, on SQLite and on PostgreSQL -------------------------------------------------

def test_promote_then_demote(project):
    p = project
    p.set_role("ann", "lead")
    assert _roles(p) == {"boss": "lead", "ann": "lead"}
    assert p.check_reviewer("ann") == "ann"
    p.set_role("ann", "annotator")
    assert _roles(p) == {"boss": "lead", "ann": "annotator"}
    with pytest.raises(NotALeadError):
        p.check_reviewer("ann")


def test_one_history_row_per_change(project):
    p = project
    ann_id = ids_of(p)["ann"]
    n = len(p.history())
    p.set_role("ann", "lead")
    rows = p.history()[n:]
    assert len(rows) == 1 and p.last_edit_ids == [rows[0].id]
    e = rows[0]
    assert (e.who, e.action, e.entity, e.entity_id, e.clip) == ("boss", "set", "annotator", ann_id, None)
    assert e.before["role"] == "annotator" and e.after["role"] == "lead"
    assert _without_role(e.before) == _without_role(e.after)
    assert e.after["name"] == "ann"


def test_same_role_again_writes_nothing(project):
    p = project
    n = len(p.history())
    p.set_role("ann", "annotator")
    p.set_role("boss", "lead")      # also for the only lead: nothing to refuse, nothing to do
    assert len(p.history()) == n and p.last_edit_ids == []
    assert _roles(p) == {"boss": "lead", "ann": "annotator"}


def test_the_last_lead_stays(project):
    p = project
    n = len(p.history())
    with pytest.raises(RecordError, match="at least one lead must remain"):
        p.set_role("boss", "annotator")
    assert _roles(p)["boss"] == "lead" and len(p.history()) == n
    p.set_role("ann", "lead")
    p.set_role("ann", "annotator")
    with pytest.raises(RecordError, match="at least one lead must remain"):
        p.set_role("boss", "annotator")


@pytest.mark.parametrize("name, role, message", [
    ("nobody", "lead", "no such annotator"),
    ("ann", "owner", "role must be one of annotator, lead"),
    ("ann", "", "role must be one of annotator, lead"),
    ("ann", "Lead", "role must be one of annotator, lead"),
])
def test_unknown_person_or_role_is_refused(project, name, role, message):
    p = project
    n = len(p.history())
    with pytest.raises(RecordError, match=message):
        p.set_role(name, role)
    assert _roles(p) == {"boss": "lead", "ann": "annotator"} and len(p.history()) == n


# ---- locally: the acting person must be a lead (as for blind mode and assignment plans) -----

def test_only_leads_change_roles_locally(tmp_path):
    with Project.create(tmp_path / "solo", user="boss") as p:
        p.add_annotator("ann")
        p.add_annotator("bob")
        p.user = "ann"
        with pytest.raises(TeamPermissionError, match="only leads change roles"):
            p.set_role("ann", "lead")
        with pytest.raises(TeamPermissionError):
            p.set_role("bob", "annotator")   # even a no-op: annotators do not decide roles
        p.user = "nobody"
        with pytest.raises(RecordError, match="no such annotator"):
            p.set_role("ann", "lead")
        p.user = "boss"
        p.set_role("ann", "lead")
        p.set_role("boss", "annotator")      # a lead may step down while another lead remains
        with pytest.raises(TeamPermissionError):
            p.set_role("bob", "lead")
        p.user = "ann"
        p.set_role("bob", "lead")
        assert _roles(p) == {"boss": "annotator", "ann": "lead", "bob": "lead"}
        assert [e.who for e in p.history() if e.entity == "annotator" and e.action == "set"] == \
            ["boss", "boss", "ann"]


def test_cli_set_role(tmp_path, capsys):
    with Project.create(tmp_path / "solo", user="boss") as p:
        p.add_annotator("ann")
    d = str(tmp_path / "solo")
    assert main(["set-role", d, "ann", "lead", "--user", "boss"]) == 0
    assert capsys.readouterr().out.strip() == "'ann' is now a lead"
    assert main(["set-role", d, "ann", "lead", "--user", "boss"]) == 0
    assert capsys.readouterr().out.strip() == "'ann' is still a lead"
    assert main(["set-role", d, "boss", "annotator", "--user", "ann"]) == 0
    assert capsys.readouterr().out.strip() == "'boss' is now an annotator"
    for argv, words in ((["ann", "annotator", "--user", "ann"], "at least one lead must remain"),
                        (["ann", "annotator", "--user", "boss"], "not a lead"),
                        (["nobody", "lead", "--user", "ann"], "no such annotator")):
        assert main(["set-role", d, *argv]) == 1
        err = capsys.readouterr().err
        assert words in err and err.startswith("clipscribe: error: ") and err.count("\n") == 1
    with pytest.raises(SystemExit) as exc:
        main(["set-role", d, "ann", "owner"])
    assert exc.value.code == 2
    with pytest.raises(SystemExit) as exc:
        main(["set-role", "--help"])
    assert exc.value.code == 0 and "annotator or a lead" in capsys.readouterr().out
    with Project.open(d) as p:
        assert _roles(p) == {"boss": "annotator", "ann": "lead"}


# ---- on a server: the login follows the role ------------------------------------------------

def _groups(p: Project, login: str) -> set[str]:
    """The clipscribe groups ``login`` belongs to, asked of the server."""
    with p.engine.connect() as c:
        return {g for g in (ANNOTATOR_GROUP, LEAD_GROUP) if c.exec_driver_sql(
            "SELECT pg_has_role(%(l)s, %(g)s, 'MEMBER')", {"l": login, "g": g}).scalar()}


@pytest.fixture
def team(server_project, uid):
    """Lead ``boss`` (the admin); annotator ann with a login; one clip with a gold label."""
    p = server_project
    clip = add_clips(p, 1)[0]
    ann = f"ann_{uid}"
    p.add_annotator(ann, password="pw-ann")
    p.set_gold_label(clip, "stack")
    return p, ann, clip


@pytest.mark.postgres
def test_promoted_login_does_lead_things_and_demoted_does_not(team, tmp_path):
    p, ann, clip = team
    with connect_as(p, ann, "pw-ann") as conn:
        assert conn.execute("SELECT count(*) FROM gold_labels").fetchone()[0] == 0
    assert _groups(p, ann) == {ANNOTATOR_GROUP}

    p.set_role(ann, "lead")
    assert _groups(p, ann) == {LEAD_GROUP}
    with connect_as(p, ann, "pw-ann") as conn:              # a new connection of their own login
        assert conn.execute("SELECT clip_id FROM gold_labels").fetchall() == [(clip,)]
        assert conn.execute("SELECT clipscribe_is_lead()").fetchone()[0] is True
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        assert a.check_reviewer() == ann
        assert a.gold_labels() == {clip: "stack"}
        a.set_gold_label(clip, "pick up")
        a.require_export_right()
    assert p.gold_labels() == {clip: "pick up"}

    p.set_role(ann, "annotator")
    assert _groups(p, ann) == {ANNOTATOR_GROUP}
    with connect_as(p, ann, "pw-ann") as conn:
        assert conn.execute("SELECT count(*) FROM gold_labels").fetchone()[0] == 0
        assert conn.execute("SELECT clipscribe_is_lead()").fetchone()[0] is False
        with pytest.raises(psycopg.errors.InsufficientPrivilege):    # cannot promote themself back
            conn.execute("UPDATE annotators SET role = 'lead' WHERE db_login = current_user")
    with Project.open(p.folder, user=ann, password="pw-ann") as a:
        with pytest.raises(NotALeadError):
            a.check_reviewer()
        assert a.gold_labels() == {}
        with pytest.raises(TeamPermissionError):
            a.export_records(tmp_path / "out.jsonl")
        with pytest.raises(TeamPermissionError):
            a.set_role(ann, "lead")


@pytest.mark.postgres
def test_person_without_login_changes_only_the_row(server_project, uid):
    p = server_project
    name = f"later_{uid}"
    p.add_annotator(name)
    p.set_role(name, "lead")
    assert p.role(name) == "lead"
    p.set_password(name, "pw-later")                     # the login is made in the group of the role
    assert _groups(p, name) == {LEAD_GROUP}
    with connect_as(p, name, "pw-later") as conn:
        assert conn.execute("SELECT clipscribe_is_lead()").fetchone()[0] is True


@pytest.mark.postgres
def test_lead_login_without_createrole_cannot_move_logins(team, uid):
    p, ann, _ = team
    mo = f"mo_{uid}"
    p.add_annotator(mo, role="lead", password="pw-mo")
    p.add_annotator(f"nologin_{uid}")
    n = len(p.history())
    with Project.open(p.folder, user=mo, password="pw-mo") as m:
        with pytest.raises(TeamPermissionError, match="CREATEROLE"):
            m.set_role(ann, "lead")
        m.set_role(f"nologin_{uid}", "lead")             # no login to move: a lead's row change
    assert p.role(ann) == "annotator" and _groups(p, ann) == {ANNOTATOR_GROUP}   # all rolled back
    assert [(e.who, e.after["role"]) for e in p.history()[n:]] == [(mo, "lead")]


@pytest.mark.postgres
def test_lead_login_with_createrole_changes_roles_and_itself(team, uid, pg):
    p, ann, _ = team
    mo = f"mo_{uid}"
    p.add_annotator(mo, role="lead", password="pw-mo")
    pg.sql(f'ALTER ROLE "{mo}" CREATEROLE')
    with Project.open(p.folder, user=mo, password="pw-mo") as m:
        m.set_role(ann, "lead")
        m.set_role(mo, "annotator")                      # steps down; its own history row still lands
    assert _roles(p)[ann] == "lead" and _roles(p)[mo] == "annotator"
    assert _groups(p, ann) == {LEAD_GROUP} and _groups(p, mo) == {ANNOTATOR_GROUP}
    last = p.history()[-1]
    assert (last.who, last.entity, last.entity_id) == (mo, "annotator", ids_of(p)[mo])
    assert (last.before["role"], last.after["role"]) == ("lead", "annotator")
    with connect_as(p, mo, "pw-mo") as conn:
        assert conn.execute("SELECT count(*) FROM gold_labels").fetchone()[0] == 0


@pytest.mark.postgres
def test_the_owners_person_stays_a_lead(team):
    p, ann, _ = team
    p.set_role(ann, "lead")                  # another lead exists: not the last-lead rule
    with pytest.raises(RecordError, match="owns the project's database"):
        p.set_role("boss", "annotator")
    assert p.role("boss") == "lead"


@pytest.mark.postgres
def test_a_membership_the_move_cannot_undo_refuses_the_change(team, uid, pg):
    """A lead group membership through a third role (on PostgreSQL 16, also one granted by
    another login) is not removed by REVOKE: the change is refused rather than leaving the
    row and the groups disagreeing."""
    p, ann, _ = team
    p.set_role(ann, "lead")
    side = f"side_{uid}"
    pg.sql(f"CREATE ROLE {side} NOLOGIN")
    pg.sql(f"GRANT {LEAD_GROUP} TO {side}")
    pg.sql(f'GRANT {side} TO "{ann}"')
    with pytest.raises(RecordError, match=f"still belongs to {LEAD_GROUP}"):
        p.set_role(ann, "annotator")
    assert p.role(ann) == "lead"
    pg.sql(f'REVOKE {side} FROM "{ann}"')
    p.set_role(ann, "annotator")
    assert _groups(p, ann) == {ANNOTATOR_GROUP}


@pytest.mark.postgres
def test_an_open_connection_follows_the_change_at_its_next_statement(team):
    p, ann, clip = team
    with connect_as(p, ann, "pw-ann") as conn:
        assert conn.execute("SELECT count(*) FROM gold_labels").fetchone()[0] == 0
        p.set_role(ann, "lead")
        assert conn.execute("SELECT clip_id FROM gold_labels").fetchall() == [(clip,)]
        p.set_role(ann, "annotator")
        assert conn.execute("SELECT count(*) FROM gold_labels").fetchone()[0] == 0


@pytest.mark.postgres
def test_a_lead_without_createrole_gets_a_clear_refusal_for_logins_and_passwords(team, uid):
    p, ann, _ = team
    mo = f"mo2_{uid}"
    p.add_annotator(mo, role="lead", password="pw-mo")
    n = len(p.annotators())
    with Project.open(p.folder, user=mo, password="pw-mo") as m:
        with pytest.raises(TeamPermissionError, match="refused to make a login.*CREATEROLE"):
            m.add_annotator(f"new_{uid}", password="pw-new")
        with pytest.raises(TeamPermissionError, match="refused the new password.*CREATEROLE"):
            m.set_password(ann, "pw-other")
    assert len(p.annotators()) == n                       # the person was not added either
    with connect_as(p, ann, "pw-ann") as conn:            # the old password still works
        assert conn.execute("SELECT 1").fetchone() == (1,)
