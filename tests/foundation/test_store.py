"""Schema, migrations and constraints."""

from __future__ import annotations

import sqlite3

import pytest
from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from sqlalchemy import text
from sqlalchemy.exc import IntegrityError

from clipscribe import Project, ProjectError, RecordError
from clipscribe.store import db
from clipscribe.store.models import Base


def test_migrations_from_empty_reach_head_and_match_models(tmp_path):
    with Project.create(tmp_path / "p") as p:
        assert db.current_revision(p.engine) == db.head_revision()
        with p.engine.connect() as conn:
            diff = compare_metadata(MigrationContext.configure(conn, opts={"compare_type": True}), Base.metadata)
        assert diff == [], f"models drifted from migrations: {diff}"


def test_sqlite_pragmas(project):
    with project.engine.connect() as conn:
        assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
        assert conn.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
        assert conn.exec_driver_sql("PRAGMA busy_timeout").scalar() == db.SQLITE_BUSY_MS


def test_database_from_newer_version_is_refused(tmp_path):
    Project.create(tmp_path / "p").close()
    con = sqlite3.connect(tmp_path / "p" / "project.sqlite")
    con.execute("UPDATE alembic_version SET version_num = '9999_future'")
    con.commit()
    con.close()
    with pytest.raises(ProjectError, match="newer version"):
        Project.open(tmp_path / "p")


def test_open_missing_and_create_twice(tmp_path):
    with pytest.raises(ProjectError, match="no clipscribe project"):
        Project.open(tmp_path / "none")
    Project.create(tmp_path / "p").close()
    with pytest.raises(ProjectError, match="already holds"):
        Project.create(tmp_path / "p")


@pytest.mark.parametrize("sql", [
    # end must be after start, start non-negative (CheckConstraint)
    "INSERT INTO segments (clip_id, annotator_id, label_id, start_frame, end_frame, updated_at, version)"
    " VALUES (1, 1, 1, 5, 5, '2026-01-01', 1)",
    "INSERT INTO segments (clip_id, annotator_id, label_id, start_frame, end_frame, updated_at, version)"
    " VALUES (1, 1, 1, -1, 5, '2026-01-01', 1)",
    # role is annotator or lead
    "INSERT INTO annotators (name, role, created_at) VALUES ('x', 'boss', '2026-01-01')",
    # one label per clip and annotator
    "INSERT INTO clip_labels (clip_id, annotator_id, label_id, updated_at, version)"
    " VALUES (1, 2, 1, '2026-01-01', 1), (1, 2, 2, '2026-01-01', 1)",
    # foreign keys are enforced
    "INSERT INTO captions (clip_id, annotator_id, position, text, updated_at, version)"
    " VALUES (999, 1, 0, 'x', '2026-01-01', 1)",
    # clip paths are unique
    "INSERT INTO clips (path, sha256, fps, frame_count, duration, width, height, state, added_at)"
    " SELECT path, sha256, fps, frame_count, duration, width, height, state, added_at FROM clips LIMIT 1",
])
def test_model_constraints(project, sql):
    with pytest.raises(IntegrityError):
        with project.engine.begin() as conn:
            conn.execute(text(sql))


def test_optimistic_version_refuses_stale_caption(project):
    from clipscribe.errors import StaleWriteError
    cid = project.add_caption(1, "ann-a", "The arm lifts the red block.")
    v = project.update_caption(cid, "The arm lifts the blue block.")
    with pytest.raises(StaleWriteError, match="changed by someone else"):
        project.update_caption(cid, "My stale edit", expected_version=v - 1)
    assert project.captions(clip=1)[0][2] == "The arm lifts the blue block."


def _caption_deletes(project, cid):
    return [e for e in project.history(clip=1) if e.entity == "caption" and e.entity_id == cid
            and e.action == "delete"]


def test_delete_with_a_stale_version_is_refused_and_deletes_nothing(project):
    from clipscribe.errors import StaleWriteError
    cid = project.add_caption(1, "ann-a", "The arm lifts the red block.")
    v = project.update_caption(cid, "The arm lifts the blue block.")
    with pytest.raises(StaleWriteError, match="changed by someone else.*nothing was deleted") as err:
        project.delete_caption(cid, expected_version=v - 1)
    assert (err.value.current_text, err.value.current_version) == ("The arm lifts the blue block.", v)
    assert project.captions(clip=1) == [(1, "ann-a", "The arm lifts the blue block.")]
    assert _caption_deletes(project, cid) == []


def test_delete_at_the_right_version_deletes_with_one_history_row(project):
    cid = project.add_caption(1, "ann-a", "The arm lifts the red block.")
    project.delete_caption(cid, expected_version=project.caption_version(cid))
    assert project.captions(clip=1) == []
    assert len(_caption_deletes(project, cid)) == 1


def test_delete_without_a_version_still_works(project):
    cid = project.add_caption(1, "ann-a", "The arm lifts the red block.")
    project.update_caption(cid, "The arm lifts the blue block.")
    project.delete_caption(cid)
    assert project.captions(clip=1) == []
    assert len(_caption_deletes(project, cid)) == 1
    with pytest.raises(RecordError, match="no such caption"):
        project.delete_caption(cid)


@pytest.mark.parametrize("write", [
    lambda p, cid, v: p.update_caption(cid, "My edit of a caption now gone", expected_version=v),
    lambda p, cid, v: p.delete_caption(cid, expected_version=v),
], ids=["update", "delete"])
def test_a_versioned_write_to_a_deleted_caption_is_a_stale_write(project, write):
    from clipscribe.errors import StaleWriteError
    cid = project.add_caption(1, "ann-a", "The arm lifts the red block.")
    v = project.caption_version(cid)
    project.delete_caption(cid)
    with pytest.raises(StaleWriteError, match="deleted by someone else") as err:
        write(project, cid, v)
    assert (err.value.current_text, err.value.current_version) == (None, None)
    assert project.captions(clip=1) == [] and len(_caption_deletes(project, cid)) == 1


def test_create_on_unreachable_server_leaves_no_project(tmp_path):
    with pytest.raises(ProjectError, match="cannot open the project database"):
        Project.create(tmp_path / "p", database_url="postgresql://nobody@127.0.0.1:1/none")
    assert not (tmp_path / "p" / "clipscribe-project.json").exists()


def test_old_migrations_do_not_run_live_code_that_may_change_later():
    """A revision's effect is fixed once released: revisions 0001-0003 import nothing from
    clipscribe (their DDL is frozen in the file); only revisions written as "apply the current
    server set-up" (0004, 0005: ``team.harden``, safe to run again) may call the live module."""
    import ast

    from clipscribe.store.db import MIGRATIONS
    for path in sorted((MIGRATIONS / "versions").glob("000[123]_*.py")):
        tree = ast.parse(path.read_text(encoding="utf-8"))
        imported = {n.module for n in ast.walk(tree) if isinstance(n, ast.ImportFrom)}
        imported |= {a.name for n in ast.walk(tree) if isinstance(n, ast.Import) for a in n.names}
        assert not any(m and m.startswith("clipscribe") for m in imported), path.name
