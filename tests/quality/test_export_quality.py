"""Export quality warnings (splits far from their ratios, clips short of reference captions),
the caption policy, skips counted honestly, and findings that name files."""

from __future__ import annotations

import json

import pytest

from clipscribe.cli import main
from clipscribe.export import CaptionInput, ClipInput, LabelPolicy, build_plan, split_clips
from clipscribe.export.checks import SPLIT_TOLERANCE, split_balance
from clipscribe.export.policy import agreeing_annotators, choose_captions


def _label_all(p, label="stack"):
    for c in p.clips():
        for who in ("ann-a", "ann-b"):
            p.set_clip_label(c.id, who, label)


# ---- split balance ---------------------------------------------------------------------------

def test_three_groups_of_eight_clips_cannot_meet_70_15_15_and_say_so():
    # groups of 3, 3 and 2 clips: with every split filled the best is 3/3/2 = 37.5/37.5/25 %
    items = [(str(i), "g1" if i < 3 else "g2" if i < 6 else "g3", "stack") for i in range(8)]
    res = split_clips(items, {"train": 0.7, "val": 0.15, "test": 0.15})
    shares = sorted(list(res.assignment.values()).count(s) for s in ("train", "val", "test"))
    assert shares == [2, 3, 3]
    warned = split_balance(res.assignment, res.ratios, {c: g for c, g, _ in items})
    by_split = {w.details["split"]: w for w in warned}
    # worked by hand: train |3/8 - 0.70| = 0.325 and val |3/8 - 0.15| = 0.225 exceed 0.10;
    # test |2/8 - 0.15| = 0.10 does not exceed it
    assert SPLIT_TOLERANCE == 0.10
    assert res.assignment["6"] == "test" and set(by_split) == {"train", "val"}
    assert all(w.kind == "split-off-ratio" for w in warned)
    assert "38% of the clips (3 of 8) where its ratio is 70%" in by_split["train"].message
    assert "3 groups among 8 clips, the largest with 3" in by_split["train"].message


def test_empty_splits_are_reported_and_a_fair_split_is_quiet():
    empty = split_balance({str(i): "train" for i in range(8)},
                          {"train": 0.7, "val": 0.15, "test": 0.15}, {})
    assert sorted((w.kind, w.details["split"]) for w in empty) == [
        ("split-empty", "test"), ("split-empty", "val"), ("split-off-ratio", "train")]
    fair = {str(i): "train" if i < 70 else "val" if i < 85 else "test" for i in range(100)}
    assert split_balance(fair, {"train": 0.7, "val": 0.15, "test": 0.15}, {}) == []


def test_cli_and_manifest_carry_the_split_warnings(team, tmp_path, capsys):
    _label_all(team)
    folder = team.folder
    team.close()
    out = tmp_path / "out"
    # the synthetic test videos all look alike: accept the near-duplicate findings
    assert main(["export", str(folder), str(out), "--override", "synthetic look-alikes"]) == 0
    text = capsys.readouterr().out
    assert "warning: split-off-ratio: split 'train' holds 38% of the clips (3 of 8)" in text
    m = json.loads((out / "manifest.json").read_text())
    assert {(w["kind"], w["details"]["split"]) for w in m["warnings"]} >= {
        ("split-off-ratio", "train"), ("split-off-ratio", "val")}
    assert "percentage points" in m["recipes"]["warnings"]


# ---- captions --------------------------------------------------------------------------------

def _clip_with_gold():
    caps = (CaptionInput("A worker stacks boxes.", "ann-a"),    # same text as gold, normalised
            CaptionInput("boxes go on the pile", "ann-a"),
            CaptionInput("someone piles crates", "ann-b"),
            CaptionInput("a person sorts parcels", "ann-c"),    # disagrees: said "sort"
            CaptionInput("too short", "ann-b", accepted=False))
    return ClipInput("1", "bench-1/take-0.mp4", labels=("stack", "stack", "sort"),
                     annotator_labels=(("ann-a", "stack"), ("ann-b", "stack"), ("ann-c", "sort")),
                     gold_label="stack", captions=caps, gold_captions=("a worker stacks boxes",))


def test_gold_only_keeps_the_ticked_caption_and_warns_it_is_short():
    plan = build_plan([_clip_with_gold()], {"all": 1.0}, captions_wanted=3)
    assert [t for t, _ in plan.captions["1"].captions] == ["a worker stacks boxes"]
    (w,) = [w for w in plan.warnings if w.kind == "few-captions"]
    assert w.files == ("bench-1/take-0.mp4",) and w.details["captions"] == {"1": 1}
    assert "fewer than the 3 reference captions" in w.message


def test_gold_and_agreeing_adds_agreeing_annotators_without_repeats():
    clip = _clip_with_gold()
    assert agreeing_annotators(clip, "stack") == {"ann-a", "ann-b"}
    choice = choose_captions(clip, "stack", LabelPolicy(captions="gold+agreeing"))
    # gold first; ann-a's copy of the gold text is dropped; ann-c disagreed; "too short" was
    # not accepted
    assert [t for t, _ in choice.captions] == ["a worker stacks boxes", "boxes go on the pile",
                                               "someone piles crates"]
    assert [choice.source_of(i) for i in range(3)] == ["gold", "accepted", "accepted"]
    plan = build_plan([clip], {"all": 1.0}, captions_wanted=3,
                      policy=LabelPolicy(captions="gold+agreeing"))
    assert not [w for w in plan.warnings if w.kind == "few-captions"]


def test_skippers_never_agree():
    clip = ClipInput("1", "x.mp4", labels=("stack",), annotator_labels=(("ann-a", "stack"),),
                     skipped=(("ann-b", "too dark"),),
                     captions=(CaptionInput("boxes", "ann-a"), CaptionInput("dark", "ann-b")))
    assert agreeing_annotators(clip, "stack") == {"ann-a"}
    assert agreeing_annotators(clip, None) == {"ann-a"}


def test_unknown_caption_policy_is_refused():
    with pytest.raises(ValueError, match="captions must be one of gold, gold\\+agreeing"):
        LabelPolicy(captions="everything")


def test_project_export_writes_the_chosen_captions_and_warns(team, tmp_path, capsys):
    _label_all(team)
    first = team.clips()[0].id
    for who, text in (("ann-a", "a worker stacks boxes"), ("ann-b", "boxes are piled up"),
                      ("ann-c", "crates are stacked by hand")):
        team.add_caption(first, who, text)
    team.set_clip_label(first, "ann-c", "stack")
    team.set_gold_label(first, "stack")
    team.set_gold_captions(first, ["a worker stacks boxes"])
    plan = team.plan_export({"all": 1.0})
    assert [w.kind for w in plan.warnings] == ["few-captions"]
    m = team.write_export(tmp_path / "gold", plan)
    rec = json.loads((tmp_path / "gold" / "all.jsonl").read_text().splitlines()[0])
    assert [c["text"] for c in rec["captions"]] == ["a worker stacks boxes"]
    assert m.warnings[0].kind == "few-captions" and m.label_policy.captions == "gold"
    plan = team.plan_export({"all": 1.0}, captions="gold+agreeing")
    team.write_export(tmp_path / "agree", plan)
    rec = json.loads((tmp_path / "agree" / "all.jsonl").read_text().splitlines()[0])
    assert [c["text"] for c in rec["captions"]] == [
        "a worker stacks boxes", "boxes are piled up", "crates are stacked by hand"]
    assert [c["source"] for c in rec["captions"]] == ["gold", "accepted", "accepted"]
    # the first clip now has its three; the other seven have none, so they are short still
    assert [w.kind for w in plan.warnings] == ["few-captions"]
    assert str(first) not in plan.warnings[0].details["captions"]
    assert len(plan.warnings[0].clips) == 7


def test_cli_export_takes_the_caption_policy_and_prints_the_warning(team, tmp_path, capsys):
    _label_all(team)
    first = team.clips()[0].id
    team.add_caption(first, "ann-a", "a worker stacks boxes")
    team.add_caption(first, "ann-b", "boxes are piled up")
    team.set_gold_label(first, "stack")
    team.set_gold_captions(first, ["a worker stacks boxes"])
    folder = team.folder
    team.close()
    assert main(["export", str(folder), str(tmp_path / "o"), "--ratios", "all=1",
                 "--dry-run"]) == 0
    text = capsys.readouterr().out
    assert "warning: few-captions: 8 of 8 clips have fewer than the 3" in text
    assert "bench-1/take-0.mp4" in text and "'gold+agreeing' adds" in text
    assert main(["export", str(folder), str(tmp_path / "o"), "--ratios", "all=1",
                 "--captions", "gold+agreeing", "--dry-run"]) == 0


# ---- skips -----------------------------------------------------------------------------------

def test_a_skip_is_not_a_vote_and_is_counted_as_a_skip(team, tmp_path):
    clip = team.clips()[3].id
    team.set_clip_label(clip, "ann-a", "stack")
    team.set_clip_label(clip, "ann-b", "sort")          # clicked, then skipped the clip
    team.set_clip_state(clip, "ann-b", "skipped", "too dark to see the hands")
    assert team.skips(clip) == [(clip, "ann-b", "too dark to see the hands")]
    plan = team.plan_export({"all": 1.0})
    d = plan.decisions[str(clip)]
    # counted as a vote, ann-b's "sort" would tie with "stack" and leave the clip out
    assert (d.label, d.agreement, d.annotators, d.skipped) == ("stack", 1.0, 1, 1)
    team.write_export(tmp_path / "x", plan)
    rec = next(json.loads(l) for l in (tmp_path / "x" / "all.jsonl").read_text().splitlines()
               if json.loads(l)["clip"] == str(clip))
    assert rec["annotators"] == 1 and rec["skipped"] == 1


def test_agreement_report_leaves_out_labels_of_skipped_clips(team):
    clip = team.clips()[0].id
    team.set_clip_label(clip, "ann-a", "stack")
    team.set_clip_label(clip, "ann-b", "sort")
    team.set_clip_state(clip, "ann-b", "skipped", "not the task")
    assert (clip, "ann-b", "sort") in team.clip_labels()
    assert (clip, "ann-b", "sort") not in team.agreement_inputs()["labels"]


# ---- findings name files ---------------------------------------------------------------------

def test_leakage_findings_name_the_media_files(team, tmp_path, capsys):
    import shutil
    _label_all(team)
    src = team.media_root / "bench-1" / "take-0.mp4"
    shutil.copyfile(src, team.media_root / "bench-3" / "copy.mp4")
    with pytest.warns(UserWarning):
        twin = team.add_clip("bench-3/copy.mp4", group="bench-3")
    for who in ("ann-a", "ann-b"):
        team.set_clip_label(twin, who, "stack")
    plan = team.plan_export(seed=0)
    (f,) = [f for f in plan.leakage.findings if f.kind.startswith("duplicate-media")]
    assert "bench-1/take-0.mp4" in f.message and "bench-3/copy.mp4" in f.message
    assert sorted(f.files) == ["bench-1/take-0.mp4", "bench-3/copy.mp4"]
    assert sorted(f.clips) == sorted([str(team.clips()[0].id), str(twin)])  # ids stay
    folder = team.folder
    team.close()
    main(["export", str(folder), str(tmp_path / "o"), "--dry-run"])
    out = capsys.readouterr().out
    assert "bench-3/copy.mp4" in out and "clips '" not in out


def test_clips_of_their_own_group_and_label_still_fill_every_split():
    # 8 clips, no groups, 8 different labels: each label's quota (0.7, 0.15, 0.15 of one clip)
    # rounds to nothing, so the one clip goes where the split is furthest below its size
    # (5.6, 1.2 and 1.2 clips wanted): worked by hand, train takes 5, then val, test, train
    items = [(str(i), None, f"label-{i}") for i in range(8)]
    res = split_clips(items, {"train": 0.7, "val": 0.15, "test": 0.15})
    counts = {s: list(res.assignment.values()).count(s) for s in ("train", "val", "test")}
    assert counts == {"train": 6, "val": 1, "test": 1}
    assert not [w for w in split_balance(res.assignment, res.ratios, {})
                if w.kind == "split-empty"]


def test_single_clip_groups_keep_each_label_within_its_rounded_quota():
    # largest-remainder apportionment: every split gets the floor or the ceiling of its quota
    import math
    ratios = {"train": 0.7, "val": 0.15, "test": 0.15}
    items = [(str(i), None, f"l{i % 5}") for i in range(53)]
    res = split_clips(items, ratios)
    for lab in {x for _, _, x in items}:
        n = sum(1 for _, _, x in items if x == lab)
        for s, r in ratios.items():
            got = sum(1 for c, _, x in items if x == lab and res.assignment[c] == s)
            assert math.floor(r * n) <= got <= math.ceil(r * n), (lab, s, got, r * n)
