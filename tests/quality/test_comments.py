"""Lead comments reach the annotator they are addressed to: on that clip, in the clip panel,
marked new until read; and they travel in ``dump``."""

from __future__ import annotations

import json

import pytest
from PySide6.QtCore import QSettings

from clipscribe import Project, RecordError


@pytest.fixture
def noted(team):
    """ann-a and ann-b labelled the first clip; the lead wrote to ann-a, then to everyone on it."""
    clip = team.clips()[0].id
    team.set_clip_label(clip, "ann-a", "stack")
    team.set_clip_label(clip, "ann-b", "sort")
    team.add_comment(clip, "the hands start stacking at frame 2", annotator="ann-a")
    team.comment_to_annotators(clip, "sort means by colour, not by size")
    team.add_comment(clip, "a lead-only note")  # addressed to no one
    return team, clip


def test_each_annotator_sees_only_comments_addressed_to_them(noted):
    p, clip = noted
    a = [(n.lead, n.text, n.unread) for n in p.my_comments(clip, "ann-a")]
    assert a == [("lead", "the hands start stacking at frame 2", True),
                 ("lead", "sort means by colour, not by size", True)]
    b = [n.text for n in p.my_comments(clip, "ann-b")]
    assert b == ["sort means by colour, not by size"]
    assert p.my_comments(clip, "ann-c") == []  # never worked on the clip: not addressed
    assert p.unread_comments("ann-a") == {clip: 2} and p.unread_comments("ann-c") == {}


def test_reading_is_per_annotator_and_new_comments_are_unread_again(noted):
    p, clip = noted
    edits = len(p.history())
    assert p.mark_comments_read(clip, "ann-a") == 2
    assert len(p.history()) == edits  # reading is no edit of the data: nothing to undo
    assert p.unread_comments("ann-a") == {} and p.unread_comments("ann-b") == {clip: 1}
    assert p.mark_comments_read(clip, "ann-a") == 0
    p.add_comment(clip, "and keep the end frame exclusive", annotator="ann-a")
    notes = p.my_comments(clip, "ann-a")
    assert [n.unread for n in notes] == [False, False, True]


def test_comment_to_everyone_needs_someone_to_address(team):
    with pytest.raises(RecordError, match="no annotator has worked on it"):
        team.comment_to_annotators(team.clips()[1].id, "hello")


def test_dump_writes_comments_and_import_reads_them_back_once(noted, tmp_path):
    p, clip = noted
    out = tmp_path / "all.jsonl"
    p.export_records(out)
    recs = [json.loads(line) for line in out.read_text().splitlines()]
    comments = [r for r in recs if r["type"] == "comment"]
    path = p.clip(clip).path
    assert comments == [
        {"type": "comment", "clip": path, "annotator": "lead", "to": "ann-a",
         "text": "the hands start stacking at frame 2"},
        {"type": "comment", "clip": path, "annotator": "lead", "to": "ann-a",
         "text": "sort means by colour, not by size"},
        {"type": "comment", "clip": path, "annotator": "lead", "to": "ann-b",
         "text": "sort means by colour, not by size"},
        {"type": "comment", "clip": path, "annotator": "lead", "text": "a lead-only note"}]
    assert p.import_records(out)["comment"] == 0  # already there: nothing doubled
    with Project.create(tmp_path / "copy", user="lead") as q:
        q.define_labels(["stack", "sort"])
        for name in ("ann-a", "ann-b", "ann-c"):
            q.add_annotator(name)
        for c in p.clips():
            dst = q.media_root / c.path
            dst.parent.mkdir(parents=True, exist_ok=True)
            dst.write_bytes(p.media_path(c.id).read_bytes())
        counts = q.import_records(out)
        assert counts["comment"] == 4
        assert q.comments() == [(q.clip(path).id, *r[1:]) for r in p.comments()]


def test_a_comment_record_by_a_non_lead_is_refused(noted, tmp_path):
    p, clip = noted
    bad = tmp_path / "bad.jsonl"
    bad.write_text(json.dumps({"type": "comment", "clip": str(clip), "annotator": "ann-b",
                               "to": "ann-a", "text": "psst"}) + "\n")
    with pytest.raises(RecordError, match="bad.jsonl:1: .*'ann-b' is not a lead"):
        p.import_records(bad)


def test_clip_panel_shows_the_comments_with_a_new_mark_until_read(qtbot, noted, tmp_path):
    from clipscribe.ui.app import application, open_window
    p, clip = noted
    folder = p.folder
    p.close()
    application()
    with Project.open(folder, user="ann-a") as a:
        w = open_window(a, view="work", settings=QSettings(str(tmp_path / "w.ini"),
                                                           QSettings.Format.IniFormat))
        qtbot.addWidget(w)
        w.show()
        w.open_clip(clip)
        panel = w.clip_panel
        assert "2 new comments from the lead on clip 1" in w.statusBar().currentMessage()
        assert panel.comment_box.isVisible() and panel.read_button.isVisible()
        text = panel.comments.text()
        assert text.startswith("Comments from the lead — 2 new")
        assert "● NEW  lead" in text and "the hands start stacking at frame 2" in text
        assert "a lead-only note" not in text
        w.grab().save(str(tmp_path / "panel.png"))
        panel.read_button.click()
        assert a.unread_comments() == {}
        assert "NEW" not in panel.comments.text() and not panel.read_button.isVisible()
        assert panel.comment_box.isVisible()  # read comments stay on the clip
        other = a.clips()[1].id
        w.open_clip(other)
        assert other != clip and not panel.comment_box.isVisible()
        w.close()


def test_a_blank_comment_record_is_refused_with_line_and_field(noted, tmp_path):
    p, clip = noted
    bad = tmp_path / "blank.jsonl"
    bad.write_text(json.dumps({"type": "comment", "clip": str(clip), "annotator": "lead",
                               "text": "   "}) + "\n")
    with pytest.raises(RecordError, match="blank.jsonl:1: field 'text': .*comment text is blank"):
        p.import_records(bad)
