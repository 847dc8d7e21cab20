"""Bad records and files given to import, and the round trip of dump and import: each refused
with one line naming file, line and reason, nothing half-imported; dump never fails for the
whole project."""

from __future__ import annotations

import json

import pytest
from sqlalchemy import update

from clipscribe import RecordError
from clipscribe.cli import main
from clipscribe.schema.records import MAX_CAPTION_CHARS
from clipscribe.store.models import Caption
from clipscribe.schema.caption_rules import check_caption

from ._fixtures import one_error_line, small_project


@pytest.fixture
def proj(tmp_path, make_video):
    with small_project(tmp_path / "proj", make_video, clips=2) as p:
        yield p


def _jsonl(path, *records):
    path.write_text("".join((r if isinstance(r, str) else json.dumps(r)) + "\n" for r in records),
                    encoding="utf-8")
    return path


def _cli(capsys, *args):
    rc = main(list(args))
    out = capsys.readouterr()
    return rc, out.out, out.err


CAP = {"type": "caption", "clip": "1", "annotator": "ann-a", "text": "the arm lifts the cup"}


def test_line_and_paragraph_separators_survive_dump_and_import(proj, tmp_path, make_video):
    text = "first part\u2028second part\x85third\u2029fourth"
    proj.add_caption(1, "ann-a", text)
    out = tmp_path / "all.jsonl"
    proj.export_records(out)
    raw = out.read_text("utf-8")
    assert "\u2028" not in raw and "\x85" not in raw and "\\u2028" in raw
    with small_project(tmp_path / "again", make_video) as q:
        q.import_records(out)
        assert text in [t for _, _, t in q.captions()]
    # a file written by someone else with the separators raw imports too: lines end at \n only
    raw_file = tmp_path / "raw.jsonl"
    raw_file.write_text(json.dumps({**CAP, "text": "a\u2028b\x85c"}, ensure_ascii=False) + "\n",
                        encoding="utf-8")
    assert proj.import_records(raw_file)["caption"] == 1


def test_duplicate_records_are_taken_once_and_reported(proj, tmp_path, capsys):
    lab = {"type": "label", "clip": "1", "annotator": "ann-a", "label": "stack"}
    src = _jsonl(tmp_path / "d.jsonl", lab, CAP, lab, CAP, {**lab, "clip": "g1/c0.mp4"})
    rc, out, _ = _cli(capsys, "import", str(proj.folder), str(src))
    assert rc == 0
    assert "1 label" in out and "1 caption" in out and "3 duplicate record(s)" in out
    assert len(proj.captions()) == 1 and len(proj.clip_labels()) == 1
    assert len(proj.history(annotator=None)) >= 2


def test_two_labels_for_one_clip_and_annotator_are_refused_with_both_lines(proj, tmp_path, capsys):
    src = _jsonl(tmp_path / "c.jsonl", CAP,
                 {"type": "label", "clip": "1", "annotator": "ann-a", "label": "stack"},
                 {"type": "label", "clip": "g1/c0.mp4", "annotator": "ann-a", "label": "pick up"})
    rc, _, err = _cli(capsys, "import", str(proj.folder), str(src))
    line = one_error_line(err)
    assert rc == 1 and "line 2" in line and "line 3" in line
    assert proj.clip_labels() == [] and proj.captions() == []
    csv_src = tmp_path / "c.csv"
    csv_src.write_text("clip,annotator,label\n1,ann-a,stack\n2,ann-b,stack\n1,ann-a,put down\n")
    with pytest.raises(RecordError, match="line 2 .* line 4"):
        proj.import_records(csv_src)
    assert proj.clip_labels() == []


@pytest.mark.parametrize("door", ["add", "update", "gold", "import"])
def test_one_caption_limit_at_every_door(proj, tmp_path, door):
    long = "a" * (MAX_CAPTION_CHARS + 1)
    ok = "b" * MAX_CAPTION_CHARS
    cid = proj.add_caption(1, "ann-a", ok)  # the limit itself is accepted
    with pytest.raises(RecordError, match="5,000|5000"):
        if door == "add":
            proj.add_caption(1, "ann-a", long)
        elif door == "update":
            proj.update_caption(cid, long)
        elif door == "gold":
            proj.set_gold_captions(1, [long])
        else:
            proj.import_records(_jsonl(tmp_path / "l.jsonl", {**CAP, "text": long}))
    assert [t for _, _, t in proj.captions()] == [ok]


def test_the_window_says_a_caption_is_too_long_before_saving():
    found = check_caption("a " * 2600, min_words=0, max_words=10_000)
    assert [f.code for f in found] == ["too_many_characters", "whitespace"] or \
        "too_many_characters" in [f.code for f in found]


def test_dump_writes_an_older_over_long_caption_instead_of_failing(proj, tmp_path, capsys):
    cid = proj.add_caption(1, "ann-a", "short for now")
    long = "c" * (MAX_CAPTION_CHARS + 500)
    with proj.engine.begin() as conn:  # a row stored before the limit existed
        conn.execute(update(Caption).where(Caption.id == cid).values(text=long))
    out = tmp_path / "all.jsonl"
    rc, stdout, err = _cli(capsys, "dump", str(proj.folder), str(out))
    assert rc == 0, err
    assert any(json.loads(l).get("text") == long for l in out.read_text("utf-8").splitlines())
    with pytest.raises(RecordError, match=r"all.jsonl:\d+: field 'text'"):
        proj.import_records(out)  # and import names it rather than taking it


@pytest.mark.parametrize("line, reason", [
    ('{"type": "segment", "clip": "1", "annotator": "ann-a", "label": "stack", "start": 1e400, "end": 5}',
     "start"),
    ('{"type": "segment", "clip": "1", "annotator": "ann-a", "label": "stack", "start": '
     + "9" * 40 + ', "end": 5}', "start"),
    ('{"type": "segment", "clip": "1", "annotator": "ann-a", "label": "stack", "start": 0, "end": '
     + "7" * 5000 + "}", "not accepted"),
    ('{"type": "caption", "clip": ' + "9" * 30 + ', "annotator": "ann-a", "text": "x y z"}',
     "no such clip"),
    ('{"type": "caption", "clip": "1", "annotator": "ann-a", "text": "x", "segment": [0, '
     + "1" * 25 + "]}", "segment"),
    ("[" * 100_000 + "]" * 100_000, "nested too deeply"),
    ('{"a": ' * 50_000 + "1" + "}" * 50_000, "nested too deeply"),
    ('{"type": "segment", "clip": "1", "annotator": "ann-a", "label": "stack", "start": "3", "end": 5}',
     "start"),
    ('{"type": "label", "clip": "\u00b2", "annotator": "ann-a", "label": "stack"}', "no such clip"),
])
def test_hostile_json_is_one_clear_line(proj, tmp_path, capsys, line, reason):
    src = tmp_path / "h.jsonl"
    src.write_text(line + "\n", encoding="utf-8")
    rc, _, err = _cli(capsys, "import", str(proj.folder), str(src))
    assert rc == 1
    msg = one_error_line(err)
    assert "h.jsonl:1:" in msg and reason in msg
    assert proj.captions() == [] and proj.segments() == []


@pytest.mark.parametrize("content, reason", [
    (b"clip,annotator,label\n1,ann-a,st\xe4ck\n", "not UTF-8"),
    (b"clip,annotator,label\n1,ann-a," + b"x" * 200_000 + b"\n", "not a readable CSV"),
    (b"clip,annotator,label\n1,ann-a,\"" + b"y" * 200_000 + b"\"\n", "not a readable CSV"),
])
def test_hostile_csv_is_one_clear_line(proj, tmp_path, capsys, content, reason):
    src = tmp_path / "h.csv"
    src.write_bytes(content)
    rc, _, err = _cli(capsys, "import", str(proj.folder), str(src))
    assert rc == 1 and reason in one_error_line(err)
    assert proj.clip_labels() == []


@pytest.mark.parametrize("content, reason", [
    (b"path,group\ng1/c0.mp4,caf\xe9\n", "not UTF-8"),
    (b"path,group\ng1/c0.mp4," + b"z" * 200_000 + b"\n", "not a readable CSV"),
])
def test_hostile_group_csv_is_one_clear_line(proj, tmp_path, capsys, content, reason):
    src = tmp_path / "groups.csv"
    src.write_bytes(content)
    rc, _, err = _cli(capsys, "add-media", str(proj.folder), "--group-csv", str(src))
    assert rc == 1 and reason in one_error_line(err)


@pytest.mark.parametrize("content, reason", [
    (b'{"name": "caf\xe9"}', "not UTF-8"),
    (b'{"name": "p", "caption_guideline": ' + b'{"a": ' * 5000 + b"1" + b"}" * 5001, "recursion limit"),
    (b'{"name": "p", "caption_guideline": {"min_words": ' + b"9" * 5000 + b"}}", "number out of range"),
])
def test_hostile_settings_file_is_one_clear_line(proj, capsys, content, reason):
    (proj.folder / "clipscribe-project.json").write_bytes(content)
    rc, _, err = _cli(capsys, "stats", str(proj.folder))
    assert rc == 1 and reason in one_error_line(err)


def test_the_window_refuses_an_over_long_caption_with_the_reason(proj, qapp):
    from clipscribe.ui.editor import ClipEditor
    editor = ClipEditor(proj)
    editor.clip = 1
    proj.user = "ann-a"
    said = []
    editor.notSaved.connect(said.append)
    res = editor.save_caption(None, "d" * (MAX_CAPTION_CHARS + 1), None, 0)
    assert not res.ok and said and "the limit is 5,000" in said[0]
    assert proj.captions() == []


@pytest.mark.parametrize("name", ["two\nlines", "carriage\rreturn", "tab\tinside", "sep\u2028arator"])
def test_names_with_line_breaks_or_control_characters_are_refused(proj, name):
    with pytest.raises(RecordError, match="one line of text"):
        proj.add_annotator(name)
    with pytest.raises(RecordError, match="one line of text"):
        proj.define_labels(["stack", name])
    assert "stack" in [l.name for l in proj.labels()] and len(proj.annotators()) == 3


def test_a_guideline_no_caption_could_pass_is_refused(proj, capsys):
    with pytest.raises(RecordError, match=r"min_words \(50\) is greater than max_words \(10\)"):
        proj.update_settings(caption_guideline={"min_words": 50, "max_words": 10})
    path = proj.folder / "clipscribe-project.json"
    data = json.loads(path.read_text())
    data["caption_guideline"] = {"min_words": 50, "max_words": 10}
    path.write_text(json.dumps(data))
    rc, _, err = _cli(capsys, "stats", str(proj.folder))
    assert rc == 1 and "min_words (50) is greater than max_words (10)" in one_error_line(err)
