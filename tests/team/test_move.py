"""Moving a solo project onto a server: ids kept, every table counted and checksummed,
sequences set past the largest id, the folder then opens on the server."""

from __future__ import annotations

import json

import pytest
from sqlalchemy.engine import make_url

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.errors import ProjectError
from clipscribe.project.team_move import canonical
from clipscribe.schema.settings import SETTINGS_FILE

from .conftest import add_clips
from .pg_cluster import ADMIN_PASSWORD


def test_canonical_values_agree_across_backends():
    import datetime as dt
    naive = dt.datetime(2026, 1, 2, 3, 4, 5, 6)
    aware = naive.replace(tzinfo=dt.timezone.utc).astimezone(dt.timezone(dt.timedelta(hours=2)))
    assert canonical(naive) == canonical(aware)
    assert canonical({"b": 1, "a": [1, 2]}) == canonical({"a": [1, 2], "b": 1})
    assert canonical(0.1) != canonical(0.1000001) and canonical(True) != canonical(1)


def _solo(folder) -> dict:
    with Project.create(folder, user="boss") as p:
        p.define_labels(["pick up", "put down", "stack"])
        ids = add_clips(p, 4)
        for name in ("ann", "bob"):
            p.add_annotator(name)
        for i, c in enumerate(ids):
            p.set_clip_label(c, "ann", "stack")
            p.set_clip_label(c, "bob", "pick up" if i % 2 else "stack")
            p.add_segment(c, "ann", "stack", 1, 6)
            cap = p.add_caption(c, "bob", f"a hand moves cup {i} — ünïcode")
            p.update_caption(cap, f"a hand moves cup number {i}")
        p.delete_caption(cap)                    # leaves a gap in caption ids
        p.set_gold_label(ids[0], "stack")
        p.set_gold_captions(ids[0], ["a hand stacks"])
        p.add_comment(ids[1], "check the start frame", annotator="bob")
        return {"captions": p.caption_rows(), "labels": p.clip_labels(), "history": p.history(),
                "gold": p.gold_labels(), "stats": p.stats()}


@pytest.mark.postgres
def test_move_keeps_everything(pg, tmp_path, capsys):
    folder = tmp_path / "solo"
    before = _solo(folder)
    url = make_url(pg.new_database()).set(password=ADMIN_PASSWORD).render_as_string(hide_password=False)
    assert main(["move-to-server", str(folder), url]) == 0
    out = capsys.readouterr().out
    for table in ("clips", "captions", "edits", "gold_labels", "annotators"):
        line = next(l for l in out.splitlines() if l.strip().startswith(table + " "))
        assert line.rstrip().endswith("ok") and "sha256" in line, line
    assert ADMIN_PASSWORD not in json.loads((folder / SETTINGS_FILE).read_text())["database_url"]
    assert (folder / "project.sqlite").exists()   # the solo database is left as it was
    with Project.open(folder) as p:
        assert p.is_server and p.user == "boss"
        assert p.caption_rows() == before["captions"]
        assert p.clip_labels() == before["labels"]
        assert [(e.id, e.action, e.entity, e.entity_id, e.who) for e in p.history()] == [
            (e.id, e.action, e.entity, e.entity_id, e.who) for e in before["history"]]
        assert p.gold_labels() == before["gold"] and p.stats() == before["stats"]
        top = max(c.id for c in before["captions"])
        new = p.add_caption(p.clips()[0].id, "ann", "written on the server")
        assert new > top                          # the sequence was moved past the copied ids
        p.add_annotator("cleo", password="pw-cleo")
        with Project.open(folder, user="cleo", password="pw-cleo") as c:
            assert c.captions() == []            # blind: cleo sees none of the moved work


@pytest.mark.postgres
def test_move_refuses_a_database_that_is_not_empty(pg, tmp_path):
    url = make_url(pg.new_database()).set(password=ADMIN_PASSWORD).render_as_string(hide_password=False)
    _solo(tmp_path / "a")
    Project.move_to_server(tmp_path / "a", url)
    with Project.create(tmp_path / "b", user="boss") as p:
        p.define_labels(["stack"])
    with pytest.raises(ProjectError, match="not empty"):
        Project.move_to_server(tmp_path / "b", url)
    with Project.open(tmp_path / "b") as p:          # b still opens on its own SQLite file
        assert not p.is_server
