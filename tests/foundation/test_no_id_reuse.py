"""A deleted row's id is never given to a new row (SQLite AUTOINCREMENT, migration 0003), and
the migration that rebuilds the tables keeps every row, constraint and foreign key."""

import re
import sqlite3

import pytest
from alembic import command
from sqlalchemy import create_engine

from clipscribe import Project
from clipscribe.store import db
from clipscribe.store.models import Base

REBUILT = ("assignments", "clip_labels", "segments", "captions", "gold_labels", "gold_segments",
           "gold_captions", "review_comments")


def _sqlite(p: Project) -> sqlite3.Connection:
    return sqlite3.connect(p.engine.url.database)


def _shape(conn: sqlite3.Connection, table: str) -> dict:
    """What SQLite says of a table: columns, foreign keys, indexes, CHECKs, AUTOINCREMENT."""
    sql = conn.execute("SELECT sql FROM sqlite_master WHERE type = 'table' AND name = ?",
                       (table,)).fetchone()[0]
    indexes = sorted((name, unique, tuple(c[2] for c in conn.execute(f"PRAGMA index_info('{name}')")))
                     for _, name, unique, *_ in conn.execute(f"PRAGMA index_list('{table}')"))
    return {
        "columns": conn.execute(f"PRAGMA table_info('{table}')").fetchall(),
        "foreign_keys": sorted(r[2:] for r in conn.execute(f"PRAGMA foreign_key_list('{table}')")),
        "indexes": indexes,
        "checks": sorted(re.findall(r"CONSTRAINT (\w+) CHECK", sql)),
        "autoincrement": "AUTOINCREMENT" in sql.upper(),
    }


def _dump(conn: sqlite3.Connection) -> dict:
    tables = [t for (t,) in conn.execute("SELECT name FROM sqlite_master WHERE type = 'table' "
                                         "AND name NOT IN ('sqlite_sequence', 'alembic_version')")]
    return {t: sorted(conn.execute(f'SELECT * FROM "{t}"').fetchall(), key=repr) for t in tables}


def test_migrated_tables_have_the_models_shape(tmp_path):
    """Migrations from empty give, table by table, what the models create directly."""
    with Project.create(tmp_path / "p") as p:
        migrated = _sqlite(p)
    fresh_path = tmp_path / "fresh.sqlite"
    Base.metadata.create_all(create_engine(f"sqlite:///{fresh_path}"))
    fresh = sqlite3.connect(fresh_path)
    for table in Base.metadata.tables:
        assert _shape(migrated, table) == _shape(fresh, table), table
    assert all(_shape(migrated, t)["autoincrement"] for t in REBUILT)


def test_a_deleted_newest_caption_does_not_give_its_id_to_the_next(project):
    clip = project.clips()[0].id
    old = project.add_caption(clip, "ann-a", "the arm lifts the red block")
    project.delete_caption(old)
    new = project.add_caption(clip, "ann-a", "someone else's new words")
    assert new > old
    with pytest.raises(Exception, match="no such caption|deleted"):   # the old id stays dead
        project.update_caption(old, "late edit", expected_version=1)
    assert project.caption_rows(clip=clip)[-1].text == "someone else's new words"


def test_rebuilding_keeps_every_row_and_every_reference(sample_copy):
    """Down to 0002 and up again: the same rows everywhere, and the columns that ON DELETE
    SET NULL would have cleared (captions.segment_id, gold_captions.source_caption_id) keep
    their values, because foreign keys are off while the tables are rebuilt."""
    with Project.open(sample_copy) as p:
        clip = p.clips()[0].id
        ann = p.annotators()[1].name
        seg = p.add_segment(clip, ann, p.labels()[0].name, 0, 5)
        cap = p.add_caption(clip, ann, "the arm slides the block left", segment=seg)
        p.set_gold_captions(clip, [("gold words", cap)])
        engine = p.engine
        cfg = db.alembic_config(engine)
        command.downgrade(cfg, "0003")  # later migrations add columns; the rebuild is 0003's
        before = _dump(_sqlite(p))
        assert any(r[5] == seg for r in before["captions"])            # segment_id column
        assert any(r[4] == cap for r in before["gold_captions"])       # source_caption_id
        command.downgrade(cfg, "0002")
        assert not _shape(_sqlite(p), "captions")["autoincrement"]
        assert _dump(_sqlite(p)) == before
        command.upgrade(cfg, "0003")
        assert _dump(_sqlite(p)) == before
        command.upgrade(cfg, "head")
        assert _sqlite(p).execute("PRAGMA foreign_key_check").fetchall() == []
    with Project.open(sample_copy) as p:                                # and it still opens
        assert [c.segment for c in p.caption_rows(clip=clip) if c.id == cap] == [seg]


def test_foreign_keys_are_on_again_after_migrating(tmp_path):
    with Project.create(tmp_path / "p") as p:
        with p.engine.connect() as conn:
            assert conn.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
