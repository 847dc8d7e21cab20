"""Interchange records: validation, all-or-nothing import, round trip, JSON Schema."""

from __future__ import annotations

import json
import shutil

import jsonschema
import pytest

from clipscribe import Project, RecordError
from clipscribe.schema import record_schemas

GOOD = {"type": "caption", "clip": "1", "annotator": "ann-a", "text": "The arm pushes a block."}


def _write(path, lines):
    path.write_text("\n".join(l if isinstance(l, str) else json.dumps(l) for l in lines) + "\n",
                    encoding="utf-8")
    return path


@pytest.mark.parametrize("line, field, reason", [
    ("{not json", None, "not valid JSON"),
    ("[1, 2]", None, "expected a JSON object"),
    ({"type": "dance", "clip": "1"}, "type", "does not match any of the expected tags"),
    ({"type": "caption", "clip": "1", "annotator": "ann-a"}, "text", "Field required"),
    ({**GOOD, "colour": "red"}, "colour", "Extra inputs are not permitted"),
    ({**GOOD, "text": "   "}, "text", "caption text is blank"),
    ({"type": "segment", "clip": "1", "annotator": "ann-a", "label": "push", "start": 9, "end": 3},
     "type", "must be greater than start"),
    ({"type": "segment", "clip": "1", "annotator": "ann-a", "label": "push", "start": -1, "end": 3},
     "start", "greater than or equal to 0"),
    ({**GOOD, "clip": "77"}, "clip", "no such clip"),
    ({**GOOD, "annotator": "ghost"}, "annotator", "no such annotator"),
    ({"type": "label", "clip": "1", "annotator": "ann-a", "label": "juggle"}, "label", "not in the label set"),
    ({"type": "clip", "clip": "../../etc/passwd"}, "clip", "relative to the media root"),
    ({"type": "clip", "clip": "/etc/passwd"}, "clip", "relative to the media root"),
    ({"type": "clip", "clip": "g1/missing.mp4"}, "clip", "file not found"),
])
def test_each_validation_error_names_file_line_field_reason(project, tmp_path, line, field, reason):
    src = _write(tmp_path / "in.jsonl", [GOOD, line])
    before = project.captions()
    with pytest.raises(RecordError) as err:
        project.import_records(src)
    msg = str(err.value)
    assert f"{src}:2:" in msg and reason in msg
    if field:
        assert f"field '{field}'" in msg or field == "type"
    assert project.captions() == before, "a failed import must write nothing"


def test_import_is_idempotent_and_counts(project, tmp_path):
    src = _write(tmp_path / "in.jsonl", [
        GOOD, {"type": "label", "clip": "g1/c0.mp4", "annotator": "ann-b", "label": "push"},
        {"type": "segment", "clip": 1, "annotator": "ann-a", "label": "push", "start": 0, "end": 4},
        {"type": "caption", "clip": 1, "annotator": "ann-a", "text": "Tied to a segment.", "segment": [0, 4]},
    ])
    assert project.import_records(src) == {"clip": 0, "label": 1, "segment": 1, "caption": 2, "gold": 0,
                                          "duplicate": 0}
    assert project.import_records(src)["caption"] == 0
    assert len(project.captions()) == 2


def test_labels_csv_round_trip(project, tmp_path):
    src = tmp_path / "labels.csv"
    src.write_text("clip,annotator,label\ng1/c0.mp4,ann-a,push\n2,ann-b,pick up\n")
    project.import_records(src)
    out = tmp_path / "out.csv"
    project.export_labels_csv(out)
    assert out.read_text().splitlines()[1:] == ["g1/c0.mp4,ann-a,push", "g1/c1.mp4,ann-b,pick up"]
    bad = tmp_path / "bad.csv"
    bad.write_text("clip,annotator,label\ng1/c0.mp4,ann-a,push\ng1/c0.mp4,ann-a,flying\n")
    with pytest.raises(RecordError, match=r"bad.csv:3: .*not in the label set"):
        project.import_records(bad)


def test_round_trip_equality(sample_copy, tmp_path):
    """Export every record, import into a fresh project over the same media, export again."""
    with Project.open(sample_copy) as p:
        p.set_gold_label(1, "pick up")
        p.set_gold_captions(1, ["The arm lifts the red block."])
        first = tmp_path / "first.jsonl"
        p.export_records(first)
        labels = [l.name for l in p.labels()]
        people = [(a.name, a.role) for a in p.annotators()]
        lead = p.user
    with Project.create(tmp_path / "copy", user=lead) as q:
        shutil.copytree(sample_copy / "media", q.media_root, dirs_exist_ok=True)
        q.define_labels(labels)
        for name, role in people:
            q.add_annotator(name, role=role, exist_ok=True)
        q.import_records(first)
        second = tmp_path / "second.jsonl"
        q.export_records(second)
    assert first.read_text(encoding="utf-8") == second.read_text(encoding="utf-8")
    assert len(first.read_text().splitlines()) > 100


def test_json_schema_accepts_exported_records(sample_copy, tmp_path):
    schemas = record_schemas()
    with Project.open(sample_copy) as p:
        out = tmp_path / "all.jsonl"
        p.export_records(out)
    for line in out.read_text(encoding="utf-8").splitlines():
        rec = json.loads(line)
        jsonschema.validate(rec, schemas[rec["type"]])  # independent validator (jsonschema package)


def test_unicode_captions_survive(project, tmp_path):
    texts = ["Le bras dépose le cube rouge.", "机械臂把红色方块放在桌上。", "الذراع تضع المكعب الأحمر"]
    for t in texts:
        project.add_caption(2, "ann-a", t)
    out = tmp_path / "u.jsonl"
    project.export_records(out)
    assert [c[2] for c in project.captions(clip=2)] == texts
    assert all(t in out.read_text(encoding="utf-8") for t in texts)
