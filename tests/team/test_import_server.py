"""Importing labels and captions on a server: the same rows, states and history as writing
them one by one, for a lead importing everyone's work and for an annotator's own login."""

from __future__ import annotations

import json

import pytest
from sqlalchemy import text

from clipscribe import Project

from .conftest import ADMIN_PASSWORD, add_clips

pytestmark = pytest.mark.postgres

TIMES = ("updated_at", "assigned_at", "at", "added_at", "created_at", "decided_at")


def _records(a: str, b: str) -> list[dict]:
    return [
        {"type": "label", "clip": "1", "annotator": a, "label": "stack"},
        {"type": "label", "clip": "c001.avi", "annotator": a, "label": "pick up"},
        {"type": "caption", "clip": "1", "annotator": a, "text": "the arm lifts the cup"},
        {"type": "caption", "clip": "1", "annotator": a, "text": "a hand takes the cup"},
        {"type": "label", "clip": "1", "annotator": b, "label": "put down"},  # was stack
        {"type": "caption", "clip": "c002.avi", "annotator": b, "text": "the block falls"},
        {"type": "label", "clip": "c000.avi", "annotator": a, "label": "stack"},  # said above
    ]


def _content(p: Project) -> dict[str, list]:
    out = {}
    with p.engine.connect() as conn:
        for table in ("clip_labels", "captions", "assignments", "clips", "edits"):
            rows = conn.execute(text(f"SELECT * FROM {table} ORDER BY id")).mappings()
            out[table] = [{k: _untimed(v) for k, v in r.items()
                           if k not in TIMES and k != "sha256"} for r in rows]
    return out


def _untimed(v):
    if isinstance(v, dict):
        return {k: x for k, x in v.items() if k not in TIMES and k != "sha256"}
    return v


def _setup(p: Project, a: str, b: str) -> None:
    add_clips(p, 3)
    p.add_annotator(a, password="pw-a")
    p.add_annotator(b, password="pw-b")
    p.set_clip_label(1, b, "stack")


def test_a_lead_imports_on_a_server_as_record_by_record(server_project, pg, tmp_path, uid):
    a, b = f"ia_{uid}", f"ib_{uid}"
    url = pg.new_database().replace("@", f":{ADMIN_PASSWORD}@", 1)
    with Project.create(tmp_path / "ref", database_url=url, user="boss") as ref:
        ref.define_labels(["pick up", "put down", "stack"])
        _setup(ref, a + "r", b + "r")
        ref.set_clip_label(1, a + "r", "stack")
        ref.set_clip_label(2, a + "r", "pick up")
        ref.add_caption(1, a + "r", "the arm lifts the cup")
        ref.add_caption(1, a + "r", "a hand takes the cup")
        ref.set_clip_label(1, b + "r", "put down")
        ref.add_caption(3, b + "r", "the block falls")
        want = _content(ref)
    p = server_project
    _setup(p, a, b)
    src = tmp_path / "in.jsonl"
    src.write_text("".join(json.dumps(r) + "\n" for r in _records(a, b)))
    counts = p.import_records(src)
    assert (counts["label"], counts["caption"], counts["duplicate"]) == (3, 3, 1)
    got = _content(p)
    for table in ("clip_labels", "captions", "assignments", "clips"):
        assert got[table] == want[table], table
    # logins are server-wide, so the people of the two databases differ by name only
    people = lambda rows: [{**r, "after": None} if r["entity"] == "annotator" else r  # noqa: E731
                           for r in rows]
    assert people(got["edits"]) == people(want["edits"])
    assert {c.state for c in p.clips()} == {"in_progress"}
    assert p.import_records(src)["label"] == 0 and _content(p) == got

def test_an_annotator_imports_their_own_work_on_a_server(server_project, tmp_path, uid):
    p = server_project
    a, b = f"ja_{uid}", f"jb_{uid}"
    _setup(p, a, b)
    src = tmp_path / "mine.jsonl"
    src.write_text("".join(json.dumps(r) + "\n" for r in [
        {"type": "label", "clip": "2", "annotator": a, "label": "stack"},
        {"type": "caption", "clip": "2", "annotator": a, "text": "my own caption"},
        {"type": "caption", "clip": "3", "annotator": a, "text": "and another"},
    ]))
    with Project.open(p.folder, user=a, password="pw-a") as mine:
        with mine.recording() as ids:
            assert mine.import_records(src)["caption"] == 2
        assert len(ids) == 3
        assert mine.clip_state(2) == ("open", None)
    states = {c.id: c.state for c in p.clips()}
    assert states[2] == states[3] == "in_progress"  # worked out by the server
    with Project.open(p.folder, user=a, password="pw-a") as mine:
        mine.revert(ids)
        assert mine.captions(annotator=a) == [] and mine.clip_labels(annotator=a) == []
