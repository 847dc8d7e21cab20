"""The guideline at submit, reopening a submitted clip, clip states in dumps, clip facts after
ingest and the export's recorded segment rule — through the façade, as the CLI and GUI use it."""

from __future__ import annotations

import json

import jsonschema
import pytest

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.errors import GuidelineNotMet, NotALeadError, RecordError
from clipscribe.schema import record_schemas

GOOD = ["A person stacks the red block", "Two blocks end up in one pile",
        "The hand puts a block on top"]


def _rules(p, at_submit):
    p.set_caption_rules(at_submit=at_submit)


# ---- 3. the guideline at submit --------------------------------------------------------------
def test_submit_names_what_is_missing_and_writes_nothing(team):
    _rules(team, "warn")
    team.add_caption(1, "ann-a", "There is a thing")
    before = len(team.history())
    with pytest.raises(GuidelineNotMet) as err:
        team.set_clip_state(1, "ann-a", "submitted")
    missing = err.value.missing
    assert missing[0] == "1 of the 3 captions the guideline asks for"
    assert any("caption 1" in m and "there is" in m for m in missing)
    assert not err.value.blocking and "override" in str(err.value)
    assert team.clip_state(1, "ann-a")[0] == "open" and len(team.history()) == before


def test_an_override_submits_and_the_history_records_it(team):
    _rules(team, "warn")
    team.add_caption(1, "ann-a", "There is a thing")
    team.set_clip_state(1, "ann-a", "submitted", override="the clip is too short for three")
    assert team.clip_state(1, "ann-a")[0] == "submitted"
    e = team.history(clip=1)[-1]
    assert (e.action, e.entity, e.who) == ("override", "guideline", "lead")
    assert e.after["reason"] == "the clip is too short for three"
    assert e.after["missing"][0].startswith("1 of the 3 captions")
    with pytest.raises(RecordError, match="override needs a reason"):
        team.set_clip_state(2, "ann-a", "submitted", override="  ")


def test_a_block_refuses_even_an_override_and_off_checks_nothing(team):
    _rules(team, "block")
    with pytest.raises(GuidelineNotMet) as err:
        team.set_clip_state(1, "ann-a", "submitted", override="please")
    assert err.value.blocking and "block" in str(err.value)
    for text in GOOD:
        team.add_caption(1, "ann-a", text)
    team.set_clip_state(1, "ann-a", "submitted")  # meets the guideline: no override needed
    assert team.clip_state(1, "ann-a")[0] == "submitted"
    _rules(team, "off")
    team.set_clip_state(2, "ann-a", "submitted")
    assert team.clip_state(2, "ann-a")[0] == "submitted"


def test_new_projects_made_by_a_person_warn_and_the_cli_sets_the_choice(tmp_path, capsys):
    assert Project.create(tmp_path / "api").settings.caption_guideline.at_submit == "off"
    assert main(["new", str(tmp_path / "cli")]) == 0
    with Project.open(tmp_path / "cli") as p:
        assert p.settings.caption_guideline.at_submit == "warn"
    assert main(["caption-rules", str(tmp_path / "cli"), "--at-submit", "block"]) == 0
    assert "cannot be submitted" in capsys.readouterr().out
    with Project.open(tmp_path / "cli") as p:
        assert p.settings.caption_guideline.at_submit == "block"


@pytest.mark.parametrize("edit", ["label", "segment", "caption", "caption_change", "caption_delete"])
def test_editing_a_submitted_clip_reopens_it_recorded_and_undone_with_the_edit(team, edit):
    p = team
    cap = p.add_caption(1, "ann-a", GOOD[0])
    p.set_clip_label(1, "ann-a", "stack")
    p.set_clip_state(1, "ann-a", "submitted")
    with p.recording() as ids:
        {"label": lambda: p.set_clip_label(1, "ann-a", "sort"),
         "segment": lambda: p.add_segment(1, "ann-a", "stack", 0, 4),
         "caption": lambda: p.add_caption(1, "ann-a", GOOD[1]),
         "caption_change": lambda: p.update_caption(cap, GOOD[2]),
         "caption_delete": lambda: p.delete_caption(cap)}[edit]()
    assert p.clip_state(1, "ann-a")[0] == "open"
    reopen = p.history(clip=1)[-1]
    assert (reopen.action, reopen.before["state"], reopen.after["state"]) == ("reopen", "submitted", "open")
    assert p.undo_trail(1, p.user)[-1][0] != "Reopen clip"  # the step is named by the edit
    p.revert(ids)
    assert p.clip_state(1, "ann-a")[0] == "submitted"


def test_others_and_unsubmitted_work_do_not_reopen(team):
    team.set_clip_state(1, "ann-a", "submitted")
    team.set_clip_label(1, "ann-b", "stack")           # someone else's edit
    team.set_clip_state(2, "ann-a", "unsure")
    team.set_clip_label(2, "ann-a", "stack")           # not submitted: stays unsure
    assert team.clip_state(1, "ann-a")[0] == "submitted"
    assert team.clip_state(2, "ann-a")[0] == "unsure"


# ---- 4. clip states in the dump --------------------------------------------------------------
def test_dump_holds_states_skip_reasons_and_unsure_flags_and_import_reads_them_back(team, tmp_path, make_video):
    p = team
    p.set_clip_label(1, "ann-a", "stack")
    p.set_clip_state(1, "ann-a", "submitted")
    p.set_clip_state(2, "ann-b", "skipped", "too dark to see")
    p.set_clip_state(3, "ann-c", "unsure", "stack or sort?")
    p.add_comment(1, "tighter captions please", annotator="ann-a")
    out = tmp_path / "dump.jsonl"
    p.export_records(out)
    recs = [json.loads(line) for line in out.read_text().splitlines()]
    states = [r for r in recs if r["type"] == "state"]
    schema = record_schemas()["state"]
    for r in states:
        jsonschema.validate(r, schema)
    assert {(r["annotator"], r["state"], r.get("reason")) for r in states} == {
        ("ann-a", "submitted", None), ("ann-b", "skipped", "too dark to see"),
        ("ann-c", "unsure", "stack or sort?")}
    assert recs.index(states[0]) > max(i for i, r in enumerate(recs) if r["type"] != "state")
    with Project.create(tmp_path / "copy", user="lead") as q:
        q.define_labels(["stack", "sort"])
        for name in ("ann-a", "ann-b", "ann-c"):
            q.add_annotator(name)
        for c in p.clips():
            make_video(q.media_root / c.path, n=8, seed=c.id - 1)
        counts = q.import_records(out)
        assert counts["state"] == 3 and counts["comment"] == 1
        assert q.clip_state(2, "ann-b") == ("skipped", "too dark to see")
        assert q.clip_state(3, "ann-c") == ("unsure", "stack or sort?")
        assert q.clip_state(1, "ann-a")[0] == "submitted"
        assert q.import_records(out)["state"] == 0  # the same file again changes nothing


def test_a_skip_record_without_a_reason_is_refused_with_its_line(team, tmp_path):
    f = tmp_path / "bad.jsonl"
    f.write_text('{"type": "state", "clip": "1", "annotator": "ann-a", "state": "skipped"}\n')
    with pytest.raises(RecordError, match=r"bad.jsonl:1: .*needs a reason"):
        team.import_records(f)


# ---- 5. clip facts after ingest --------------------------------------------------------------
def test_clip_facts_change_as_one_undoable_edit(team):
    p = team
    c = p.clips()[0]
    with p.recording() as ids:
        assert p.set_clip_facts(c.id, group="bench-9", consent=True, licence="CC-BY-4.0",
                                source="invented rig")
    got = p.clip(c.id)
    assert (got.group, got.consent, got.licence, got.source) == (
        "bench-9", True, "CC-BY-4.0", "invented rig")
    e = p.history(clip=c.id)[-1]
    assert (e.action, e.entity, e.before["group_key"], e.after["group_key"]) == (
        "facts", "clip", c.group, "bench-9")
    assert p.set_clip_facts(c.id, group="bench-9") is False   # nothing changed, nothing logged
    assert p.history(clip=c.id)[-1].id == e.id
    p.compute_fingerprints()                                  # unrelated columns may change
    p.revert(ids)
    back = p.clip(c.id)
    assert (back.group, back.consent, back.licence, back.source) == (c.group, None, None, None)
    p.set_clip_facts(c.id, licence="CC0")                     # only the facts given change
    assert p.clip(c.id).group == c.group


def test_clip_facts_are_for_leads_and_checked(team):
    team.user = "ann-a"
    with pytest.raises(NotALeadError):
        team.set_clip_facts(1, licence="CC0")
    team.user = "lead"
    with pytest.raises(RecordError, match="licence"):
        team.set_clip_facts(1, licence="x" * 501)
    with pytest.raises(RecordError, match="no such clip"):
        team.set_clip_facts(99, licence="CC0")


def test_cli_clip_facts_changes_and_shows(team, capsys):
    folder = str(team.folder)
    assert main(["clip-facts", folder, "1", "bench-2/take-0.mp4", "--consent", "yes",
                 "--licence", "CC0", "--group", ""]) == 0
    out = capsys.readouterr().out.splitlines()
    assert len(out) == 2 and all("consent yes, licence CC0" in line and "changed" in line
                                 for line in out)
    with Project.open(folder) as p:
        assert p.clip(1).group is None and p.clip("bench-2/take-0.mp4").consent is True
    assert main(["clip-facts", folder, "--user", "ann-a", "1", "--licence", "x"]) == 1


# ---- 7. the export's segment rule, from the project ---------------------------------------
def test_project_export_records_its_segment_rule(team, tmp_path):
    p = team
    for who, end in (("ann-a", 4), ("ann-b", 6)):
        p.set_clip_label(1, who, "stack")
        p.add_segment(1, who, "stack", 0, end)
    p.set_clip_label(1, "ann-c", "stack")
    p.add_caption(1, "ann-a", GOOD[0])
    p.add_caption(1, "ann-b", GOOD[0])                # the same reference twice
    for rule, expected in (("gold+best", "annotator"), ("gold", None)):
        plan = p.plan_export({"train": 1.0}, min_agreement=0.5, segments=rule)
        assert plan.policy.segments == rule
        assert plan.segments["1"].source == expected
        m = p.write_export(tmp_path / rule, plan)
        assert m.label_policy.segments == rule and m.duplicates_dropped == 1
    with pytest.raises(RecordError, match="segments must be one of"):
        p.plan_export({"train": 1.0}, segments="first")
