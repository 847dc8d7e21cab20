"""Server projects behave like solo ones through the façade; logins per person; no password
lands in the project folder; awkward names are quoted, never spliced into SQL."""

from __future__ import annotations

import json

import pytest
from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext

from clipscribe import Project
from clipscribe.errors import RecordError
from clipscribe.errors import PermissionRefused as TeamPermissionError
from clipscribe.schema.settings import SETTINGS_FILE
from clipscribe.store.models import Base

from .conftest import add_clips
from .pg_cluster import ADMIN_PASSWORD


def _scenario(p: Project, ann: str) -> dict:
    """The same user actions on either backend; returns what the façade reports."""
    c1, c2 = add_clips(p, 2)
    p.set_clip_label(c1, ann, "stack")
    seg = p.add_segment(c1, ann, "stack", 2, 8)
    cap = p.add_caption(c1, ann, "two cups are stacked by a hand", segment=seg)
    p.update_caption(cap, "a hand stacks two cups")
    p.add_caption(c2, ann, "a cup is put down on a table")
    undo = p.last_edit_ids
    p.set_clip_state(c1, ann, "submitted")
    p.set_gold_label(c1, "stack")
    p.set_gold_captions(c1, ["a hand stacks two cups"])
    p.revert(undo)
    return {
        "labels": p.clip_labels(), "captions": p.captions(),
        "segments": [(s.clip, s.annotator, s.label, s.start, s.end) for s in p.segments()],
        "gold": p.gold_labels(), "gold_captions": p.gold_captions(),
        "states": [c.state for c in p.clips()],
        "history": [(e.action, e.entity, e.who) for e in p.history()],
    }


@pytest.mark.postgres
def test_facade_reports_the_same_on_both_backends(server_project, tmp_path, uid):
    with Project.create(tmp_path / "solo", user="boss") as solo:
        solo.define_labels(["pick up", "put down", "stack"])
        solo.add_annotator("ann")
        here = _scenario(solo, "ann")
    server_project.add_annotator("ann", password=None)
    there = _scenario(server_project, "ann")
    assert there == here


@pytest.mark.postgres
def test_settings_file_holds_no_password(server_project, tmp_path, uid):
    p = server_project
    p.add_annotator(f"pat_{uid}", password="pat-very-secret")
    cfg = json.loads((p.folder / SETTINGS_FILE).read_text())
    assert cfg["database_url"].startswith("postgresql://") and ADMIN_PASSWORD not in cfg["database_url"]
    for f in p.folder.rglob("*"):
        if f.is_file():
            data = f.read_bytes()
            assert ADMIN_PASSWORD.encode() not in data and b"pat-very-secret" not in data, f
    # the admin reopens with the password from the libpq password file (PGPASSFILE)
    with Project.open(p.folder) as again:
        assert again.user == "boss" and again.role() == "lead"


@pytest.mark.postgres
def test_each_person_logs_in_as_themself(server_project, uid):
    p = server_project
    name = f"Ann {uid}"                                  # capitals and a space
    p.add_annotator(name, password="pw-ann")
    with Project.open(p.folder, user=name, password="pw-ann") as a:
        login = a._read(lambda s: s.connection().exec_driver_sql("SELECT current_user").scalar())
        assert login == name.lower()
        a.add_caption(add_clips(p, 1)[0], name, "a hand lifts a cup")
    with pytest.raises(Exception, match="password authentication failed"):
        Project.open(p.folder, user=name, password="wrong")


@pytest.mark.postgres
@pytest.mark.parametrize("tricky", ["o'neil\"; DROP TABLE clips; --", "robert'); drop role x;--", "ünï cödé"])
def test_awkward_names_are_quoted(server_project, tricky, uid):
    p = server_project
    name = f"{tricky}{uid}"
    p.add_annotator(name, password="pw'\"x")
    with Project.open(p.folder, user=name, password="pw'\"x") as a:
        assert a.role() == "annotator"
        assert len(a.clips()) == 0
    assert p.clip_count() == 0 and p.role(name) == "annotator"  # clips table still there


@pytest.mark.postgres
def test_people_and_logins(server_project, uid):
    p = server_project
    p.add_annotator(f"nopw_{uid}")                      # a person without a login yet
    with pytest.raises(Exception):
        Project.open(p.folder, user=f"nopw_{uid}", password="anything")
    p.set_password(f"nopw_{uid}", "now-i-can")
    with Project.open(p.folder, user=f"nopw_{uid}", password="now-i-can") as a:
        assert a.role() == "annotator"
        with pytest.raises(TeamPermissionError):         # annotators cannot add people
            a.add_annotator(f"other_{uid}", password="x")
    p.add_annotator(f"again_{uid}", password="x")
    with pytest.raises(RecordError, match="already has a login"):   # same login, other spelling
        p.add_annotator(f"AGAIN_{uid}", password="y")
    assert p.role(f"AGAIN_{uid}") is None                            # nothing half-written
    with pytest.raises(RecordError):
        p.add_annotator("x" * 64, password="y")          # longer than a PostgreSQL name


def _no_diff(engine) -> list:
    with engine.connect() as conn:
        return compare_metadata(MigrationContext.configure(conn, opts={"compare_type": True}), Base.metadata)


def test_models_match_migrations_sqlite(tmp_path):
    with Project.create(tmp_path / "solo") as p:
        assert _no_diff(p.engine) == []


@pytest.mark.postgres
def test_models_match_migrations_postgres(server_project):
    assert _no_diff(server_project.engine) == []


def test_the_frozen_team_revision_downgrades_and_upgrades_again(server_project):
    """Revision 0002 carries its own server set-up (frozen DDL): going down to 0001 removes
    its helper functions and row-level security, going back up restores them."""
    from alembic import command
    from sqlalchemy import text as sql_text

    from clipscribe.store import db
    p = server_project
    cfg = db.alembic_config(p.engine)

    def state() -> tuple[int, int]:
        with p.engine.connect() as c:
            fns = c.execute(sql_text("SELECT count(*) FROM pg_proc WHERE proname LIKE 'clipscribe%'")).scalar()
            rls = c.execute(sql_text("SELECT count(*) FROM pg_class WHERE relrowsecurity "
                                     "AND relname = 'captions'")).scalar()
        return fns, rls
    before = state()
    assert before[0] > 0 and before[1] == 1
    command.downgrade(cfg, "0001")
    assert state() == (0, 0)
    command.upgrade(cfg, "head")
    assert state() == before
