"""Segment agreement: matching, offsets and frame-level alpha."""

import krippendorff
import numpy as np
import pytest

from clipscribe.agreement import frame_agreement, match_segments, segment_matching, temporal_iou

SEGS = [("c1", "a", "run", 0, 10), ("c1", "b", "run", 2, 10),
        ("c1", "a", "walk", 20, 30), ("c1", "b", "walk", 22, 40),
        ("c2", "a", "run", 0, 5)]


def test_temporal_iou():
    assert temporal_iou((0, 10), (2, 10)) == 0.8
    assert temporal_iou((0, 10), (10, 20)) == 0.0  # end exclusive: touching ranges do not overlap
    assert temporal_iou((20, 30), (22, 40)) == 0.4


def test_greedy_matching_takes_best_iou_first():
    a = [("x", 0, 10), ("x", 8, 20)]
    b = [("x", 1, 11)]
    assert match_segments(a, b, iou_threshold=0.1) == [(0, 0, pytest.approx(9 / 11))]
    assert match_segments([("x", 0, 10)], [("y", 0, 10)]) == []  # labels differ
    assert len(match_segments([("x", 0, 10)], [("y", 0, 10)], same_label=False)) == 1


def test_pair_statistics_hand_computed():
    pairs, per_clip = segment_matching(SEGS, fps={"c1": 25, "c2": 30},
                                       annotated={"c2": ["a", "b"]})
    by_t = {p.iou_threshold: p for p in pairs}
    p3 = by_t[0.3]  # both pairs match (IoU 0.8 and 0.4)
    assert (p3.matched, p3.n_a, p3.n_b) == (2, 3, 2)
    assert (p3.precision, p3.recall, p3.f1) == (pytest.approx(2 / 3), 1.0, 0.8)
    assert (p3.start_offset_frames, p3.end_offset_frames) == (2.0, 5.0)
    assert p3.boundary_offset_seconds == pytest.approx(((2 + 0) / 2 / 25 + (2 + 10) / 2 / 25) / 2)
    p7 = by_t[0.7]  # only the run segment (IoU 0.8)
    assert (p7.matched, p7.f1) == (1, pytest.approx(0.4))
    # per clip F1 at IoU 0.5: c1 one match of 2+2 segments; c2 b marked nothing -> 0
    assert per_clip == {"c1": 0.5, "c2": 0.0}
    assert "matching=greedy" in p3.recipe.text()


def test_nothing_marked_by_either_is_full_agreement():
    _, per_clip = segment_matching([], annotated={"c9": ["a", "b"]})
    assert per_clip == {"c9": 1.0}


def test_frame_alpha_matches_krippendorff_package():
    counts = {"c1": 40, "c2": 10}
    ours = frame_agreement(SEGS, counts, annotated={"c2": ["a", "b"]})
    # frames nobody marked are category 0 ("no activity"); run = 1, walk = 2
    a = np.zeros(50)
    b = np.zeros(50)
    a[0:10], a[20:30], a[40:45] = 1, 2, 1
    b[2:10], b[22:40] = 1, 2
    ref = krippendorff.alpha(reliability_data=np.stack([a, b]), level_of_measurement="nominal")
    assert ours == pytest.approx(ref, abs=1e-12)  # krippendorff package
    assert ours.recipe.n_items == 50


def test_frame_alpha_missing_annotator_and_overlap():
    segs = [("c", "a", "x", 0, 6), ("c", "a", "y", 4, 8), ("c", "b", "x", 0, 4),
            ("c", "b", "y", 4, 8), ("d", "a", "x", 0, 3)]
    # a's overlap: "y" starts later and wins frames 4-5; on clip d only a worked (not pairable)
    ours = frame_agreement(segs, {"c": 8, "d": 3})
    assert ours == 1.0


@pytest.mark.parametrize("bad,message", [
    ([("c", "a", "x", 5, 5)], "start < end"),
    ([("c", "a", "x", -1, 5)], "start < end"),
    ([("c", "a", "x", 0.5, 5)], "whole frame"),
    ([("c", "a", "x", 0)], "must be"),
])
def test_bad_segments(bad, message):
    with pytest.raises(ValueError, match=message):
        segment_matching(bad)


def test_segment_past_clip_end():
    with pytest.raises(ValueError, match="runs past"):
        frame_agreement([("c", "a", "x", 0, 12)], {"c": 10})


# ---- unlabelled segments (label None: marked before the annotator chose a label) -------------
def test_an_unlabelled_segment_matches_any_label_by_time_only():
    assert match_segments([(None, 0, 10)], [("run", 1, 10)]) == [(0, 0, pytest.approx(0.9))]
    assert match_segments([("run", 0, 10)], [(None, 1, 10)]) == [(0, 0, pytest.approx(0.9))]
    assert match_segments([(None, 0, 10)], [("run", 8, 20)]) == []   # time still decides
    # a labelled pair of the same label is not preferred over a better-timed unlabelled one
    a = [("run", 0, 10)]
    assert match_segments(a, [("walk", 0, 10), (None, 0, 9)]) == [(0, 1, pytest.approx(0.9))]


def test_the_pair_recipe_counts_unlabelled_segments():
    segs = [("c1", "a", None, 0, 10), ("c1", "b", "run", 1, 10), ("c1", "b", None, 20, 30)]
    pairs, per_clip = segment_matching(segs, thresholds=(0.5,))
    [p] = pairs
    assert (p.matched, p.n_a, p.n_b) == (1, 1, 2)
    assert p.recipe.option("unlabelled") == "2"
    assert per_clip == {"c1": pytest.approx(2 / 3)}
    labelled, _ = segment_matching([("c1", "a", "run", 0, 10), ("c1", "b", "run", 0, 10)])
    assert all(q.recipe.option("unlabelled") is None for q in labelled)


def test_frames_under_an_unlabelled_segment_are_not_rated():
    # b's frames 0-9 are unlabelled (missing for b); a rates them "run"
    segs = [("c", "a", "run", 0, 10), ("c", "b", None, 0, 10),
            ("c", "a", "walk", 15, 20), ("c", "b", "walk", 16, 20)]
    ours = frame_agreement(segs, {"c": 20})
    a = np.r_[np.ones(10), np.zeros(10)]
    b = np.r_[np.full(10, np.nan), np.zeros(10)]
    a[15:20], b[16:20] = 2, 2
    ref = krippendorff.alpha(reliability_data=np.stack([a, b]), level_of_measurement="nominal")
    assert ours == pytest.approx(ref, abs=1e-12)              # krippendorff package, nan = missing
    assert ours.recipe.option("unlabelled_frames") == "10"
    # the same frames as "(no activity)" would be another number: they are not that
    as_nothing = frame_agreement([g for g in segs if g[2] is not None], {"c": 20})
    assert as_nothing != pytest.approx(float(ours))
    assert as_nothing.recipe.option("unlabelled_frames") is None
