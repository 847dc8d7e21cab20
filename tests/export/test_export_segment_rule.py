"""The segment rule and repeated references: explicit options, recorded in every manifest."""

from __future__ import annotations

import json

import jsonschema
import pytest

from clipscribe.export import (
    CaptionInput, ClipInput, LabelPolicy, SegmentInput, build_plan, decide_captions,
    export_schemas, write_export,
)
from clipscribe.export.segment_choice import choose_segments, frame_overlap

S = SegmentInput


def _clip(cid="1", *, gold=(), own=(), labels=(("ann-a", "pour"), ("ann-b", "pour")),
          skipped=(), captions=()):
    return ClipInput(cid, f"{cid}.mp4", group=f"g{cid}", fps=10.0, frame_count=100,
                     labels=tuple(v for _, v in labels), annotator_labels=tuple(labels),
                     skipped=tuple(skipped), segments=tuple(gold), annotator_segments=tuple(own),
                     captions=tuple(captions))


@pytest.mark.parametrize("a, b, expected", [
    ([S("x", 0, 10)], [S("x", 0, 10)], 1.0),
    ([S("x", 0, 10)], [S("x", 5, 15)], 5 / 15),
    ([S("x", 0, 10)], [S("y", 0, 10)], 0.0),          # same frames, other label
    ([S("x", 0, 10), S("x", 5, 20)], [S("x", 0, 20)], 1.0),  # overlapping own segments merge
    ([], [], 0.0),
])
def test_frame_overlap_table(a, b, expected):
    assert frame_overlap(a, b) == pytest.approx(expected)
    assert frame_overlap(b, a) == pytest.approx(expected)


def test_gold_segments_win_under_either_rule():
    clip = _clip(gold=[S("pour", 0, 50)], own=[("ann-a", (S("pour", 0, 10),))])
    for rule in ("gold", "gold+best"):
        got = choose_segments(clip, {"ann-a"}, rule)
        assert (got.source, got.segments) == ("gold", (S("pour", 0, 50),))


def test_without_gold_the_best_agreeing_annotator_is_taken_not_the_first_by_name():
    own = [("ann-a", (S("pour", 0, 30),)),          # first by name, but the odd one out
           ("ann-b", (S("pour", 40, 90),)),         # overlaps c 0.80 and d 0.90: 1.70
           ("ann-c", (S("pour", 50, 90),)),         # overlaps b 0.80 and d 0.89: 1.69
           ("ann-d", (S("pour", 45, 90),))]         # overlaps b 0.90 and c 0.89: 1.79
    names = ("ann-a", "ann-b", "ann-c", "ann-d")
    clip = _clip(own=own, labels=tuple((n, "pour") for n in names))
    got = choose_segments(clip, set(names), "gold+best")
    assert (got.source, got.annotator) == ("annotator", "ann-d")
    assert got.segments == (S("pour", 45, 90),)


def test_ties_go_by_name_and_disagreeing_or_skipping_annotators_never_lend_segments():
    own = [("ann-b", (S("pour", 0, 30),)), ("ann-a", (S("pour", 0, 30),)),
           ("ann-z", (S("pour", 0, 30),))]
    clip = _clip(own=own, skipped=[("ann-a", "blurred")])
    # ann-a skipped, ann-z did not agree: ann-b is the only candidate
    assert choose_segments(clip, {"ann-b"}, "gold+best").annotator == "ann-b"
    tie = _clip(own=[("ann-b", (S("pour", 0, 30),)), ("ann-a", (S("pour", 0, 30),))])
    assert choose_segments(tie, {"ann-a", "ann-b"}, "gold+best").annotator == "ann-a"
    assert choose_segments(clip, set(), "gold+best").source is None


def test_gold_only_rule_exports_no_segments_without_gold():
    clip = _clip(own=[("ann-a", (S("pour", 0, 30),))])
    got = choose_segments(clip, {"ann-a"}, "gold")
    assert (got.segments, got.source) == ((), None)


def test_unknown_segment_rule_is_refused():
    with pytest.raises(ValueError, match="segments must be one of"):
        LabelPolicy(segments="first")


@pytest.mark.parametrize("policy", ["gold", "gold+agreeing"])
def test_exact_repeated_references_are_dropped_and_counted(policy):
    caps = [CaptionInput("A cook pours milk.", "ann-a"), CaptionInput("A cook pours milk.", "ann-b"),
            CaptionInput("A cook stirs.", "ann-b")]
    got = decide_captions(caps, policy=policy, agreeing={"ann-a", "ann-b"})
    assert [t for t, _ in got.captions] == ["A cook pours milk.", "A cook stirs."]
    assert got.dropped == 1
    gold = decide_captions([], ["Same.", "Same.", "Other."], policy=policy)
    assert ([t for t, _ in gold.captions], gold.dropped) == (["Same.", "Other."], 1)


def test_same_text_on_different_segments_is_not_a_repeat():
    caps = [CaptionInput("A cook pours.", "ann-a", segment=(0, 10)),
            CaptionInput("A cook pours.", "ann-a", segment=(20, 30))]
    assert decide_captions(caps).dropped == 0


def test_manifest_and_records_say_how_segments_and_references_were_chosen(tmp_path):
    cap = CaptionInput("A cook pours milk.", "ann-a")
    clips = [_clip("1", own=[("ann-a", (S("pour", 0, 30),)), ("ann-b", (S("pour", 0, 28),))],
                   captions=[cap, CaptionInput("A cook pours milk.", "ann-b")]),
             _clip("2", gold=[S("pour", 5, 9)]),
             _clip("3")]
    for rule in ("gold+best", "gold"):
        plan = build_plan(clips, {"train": 1.0}, policy=LabelPolicy(segments=rule))
        out = tmp_path / rule
        m = write_export(out, plan)
        data = json.loads((out / "manifest.json").read_text())
        jsonschema.validate(data, export_schemas()["ExportManifest"])
        assert data["label_policy"]["segments"] == rule
        assert f"Segments ({rule})" in data["label_policy"]["rule"]
        assert data["duplicates_dropped"] == m.duplicates_dropped == 1
        assert "duplicates_dropped" in data["recipes"] and rule in data["recipes"]["segments"]
        recs = {r["clip"]: r for r in map(json.loads, (out / "train.jsonl").read_text().splitlines())}
        assert [c["text"] for c in recs["1"]["captions"]] == ["A cook pours milk."]
        assert recs["2"]["segment_source"] == "gold"
        assert "segment_source" not in recs["3"] or recs["3"]["segment_source"] is None
        if rule == "gold+best":
            assert recs["1"]["segment_source"] == "annotator"
            # two annotators always score alike (the overlap is symmetric): first by name
            assert [s["end"] for s in recs["1"]["segments"]] == [30]
        else:
            assert recs["1"]["segments"] == [] and recs["1"].get("segment_source") is None


@pytest.mark.parametrize("rule", ["gold", "gold+best"])
def test_a_clip_without_segments_gets_what_the_rule_gives_it(rule):
    # build_plan skips the rule for a clip with no gold and no annotator segments: the choice
    # it uses instead must be the rule's own answer
    from clipscribe.export.segment_choice import NO_SEGMENTS, choose_segments
    clip = ClipInput("9", "c9.mp4", fps=10.0, frame_count=50, labels=("stack",),
                     annotator_labels=(("ann-1", "stack"),), skipped=(("ann-2", "unclear"),))
    assert choose_segments(clip, {"ann-1", "ann-2"}, rule) == NO_SEGMENTS
    plan = build_plan([clip], {"train": 1.0}, policy=LabelPolicy(min_agreement=0.5, segments=rule))
    assert plan.segments["9"] == NO_SEGMENTS == plan.segments_of(clip)
