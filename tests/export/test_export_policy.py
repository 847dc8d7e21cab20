"""Label policy: gold first, else a strong unique majority; captions gold else accepted."""

from __future__ import annotations

import statistics

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clipscribe.export import CaptionInput, ClipInput, LabelPolicy, apply_policy, decide_captions
from clipscribe.export import decide_label

# (labels, gold, min_agreement, expected label, source, agreement, reason); shares worked by hand.
CASES = [
    (["run", "run", "walk"], "walk", 0.6, "walk", "gold", 1 / 3, None),
    ([], "walk", 0.6, "walk", "gold", None, None),
    (["run", "run", "run", "walk", "sit"], None, 0.6, "run", "majority", 0.6, None),  # 3/5 = 0.6
    (["run", "run", "walk"], None, 0.6, "run", "majority", 2 / 3, None),
    (["run", "walk"], None, 0.5, None, None, 0.5, "tie between 'run' and 'walk'"),
    (["sit", "run", "walk"], None, 0.0, None, None, 1 / 3,
     "tie between 'run', 'sit' and 'walk'"),
    (["run", "run", "walk", "sit"], None, 0.6, None, None, 0.5,
     "majority 'run' 0.50 below minimum 0.60"),
    ([], None, 0.6, None, None, None, "no labels"),
    (["run"], None, 1.0, "run", "majority", 1.0, None),
]


@pytest.mark.parametrize("labels,gold,min_agr,label,source,agreement,reason", CASES)
def test_decision_table(labels, gold, min_agr, label, source, agreement, reason):
    d = decide_label(labels, gold, min_agreement=min_agr, clip_id="7")
    assert (d.label, d.source, d.reason) == (label, source, reason)
    assert d.included == (reason is None)
    assert d.annotators == len(labels)
    if agreement is None:
        assert d.agreement is None
    else:
        assert d.agreement == pytest.approx(agreement)


def test_no_labels_allowed_when_labels_not_required():
    d = decide_label([], None, require_label=False)
    assert d.included and d.label is None and d.source is None


@pytest.mark.parametrize("bad", [-0.1, 1.5])
def test_policy_rejects_agreement_outside_unit_interval(bad):
    with pytest.raises(ValueError, match="min_agreement"):
        LabelPolicy(min_agreement=bad)


@settings(max_examples=150, deadline=None)
@given(st.lists(st.sampled_from(["a", "b", "c", "d"]), min_size=1, max_size=9),
       st.sampled_from([0.0, 0.34, 0.5, 0.6, 0.75, 1.0]))
def test_majority_matches_standard_library_multimode(labels, min_agr):
    # Reference: statistics.multimode (Python standard library) lists every most common value;
    # a unique one is the plurality winner, several are a tie.
    modes = statistics.multimode(labels)
    share = labels.count(modes[0]) / len(labels)
    d = decide_label(labels, min_agreement=min_agr)
    if len(modes) > 1:
        assert d.reason.startswith("tie between") and d.label is None
    elif share >= min_agr - 1e-9:
        assert d.label == modes[0] and d.source == "majority"
    else:
        assert d.reason.startswith(f"majority '{modes[0]}'") and d.label is None


def test_captions_gold_set_wins_else_accepted_only():
    caps = (CaptionInput("a dog runs", "ann1"), CaptionInput("too short", "ann2", accepted=False),
            CaptionInput("a dog is running", "ann3", segment=(0, 10)))
    gold = decide_captions(caps, ["the dog runs across the yard"])
    assert gold.source == "gold" and gold.captions == (("the dog runs across the yard", None),)
    acc = decide_captions(caps, None)
    assert acc.source == "accepted"
    assert acc.captions == (("a dog runs", None), ("a dog is running", (0, 10)))
    assert decide_captions(caps, []).source == "accepted"  # an empty gold set is no gold set


def test_apply_policy_keeps_input_order_and_ids():
    clips = [ClipInput("b", "b.mp4", labels=("x", "x")), ClipInput("a", "a.mp4", gold_label="y")]
    out = apply_policy(clips, LabelPolicy())
    assert [d.clip_id for d in out] == ["b", "a"]
    assert [d.label for d in out] == ["x", "y"]
