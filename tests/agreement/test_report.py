"""The whole-project report, checked against the reference libraries on the same rows."""

import json
import random

import krippendorff
import numpy as np
import pytest
from sklearn.metrics import cohen_kappa_score
from statsmodels.stats.inter_rater import fleiss_kappa as sm_fleiss

from clipscribe.agreement import agreement_report

LABELS = ["cut", "pour", "stack"]


def _project(seed=0, clips=60, annotators=4, drop=0.0):
    rng = random.Random(seed)
    rows = []
    for c in range(clips):
        truth = rng.choice(LABELS)
        for a in range(annotators):
            if rng.random() < drop:
                continue
            rows.append((f"clip-{c}", f"ann-{a}", truth if rng.random() < 0.7 else rng.choice(LABELS)))
    return rows


def _matrix(rows):
    clips = sorted({r[0] for r in rows}, key=lambda c: int(c.split("-")[1]))
    anns = sorted({r[1] for r in rows})
    m = np.full((len(anns), len(clips)), np.nan)
    for c, a, lab in rows:
        m[anns.index(a), clips.index(c)] = LABELS.index(lab)
    return m


def test_label_part_matches_references():
    rows = _project()
    rep = agreement_report(rows, n_boot=200)
    m = _matrix(rows)
    lab = rep.labels
    assert lab.alpha == pytest.approx(krippendorff.alpha(reliability_data=m,
                                                          level_of_measurement="nominal"),
                                      abs=1e-9)  # krippendorff package
    table = np.stack([(m == k).sum(axis=0) for k in range(3)], axis=1)
    assert lab.fleiss == pytest.approx(sm_fleiss(table), abs=1e-9)  # statsmodels
    for p in lab.pairs:
        i, j = int(p.annotator_a[-1]), int(p.annotator_b[-1])
        assert p.kappa == pytest.approx(cohen_kappa_score(m[i], m[j]), abs=1e-9)  # scikit-learn
        assert p.confusion.sum() == m.shape[1]
    for k, lab_name in enumerate(LABELS):
        binar = np.where(np.isnan(m), np.nan, (m == k).astype(float))
        ref = krippendorff.alpha(reliability_data=binar, level_of_measurement="nominal")
        score, ci = lab.per_label[lab_name]
        assert score == pytest.approx(ref, abs=1e-9)  # krippendorff package, one vs rest
        assert ci.low <= score <= ci.high
    assert lab.alpha_ci.low < lab.alpha < lab.alpha_ci.high


def test_ordinal_and_missing():
    rows = _project(seed=3, drop=0.3)
    rep = agreement_report(rows, label_order=LABELS, ordinal=True, n_boot=100)
    m = _matrix(rows)
    assert rep.labels.alpha == pytest.approx(krippendorff.alpha(
        reliability_data=m, level_of_measurement="ordinal"), abs=1e-9)  # krippendorff package
    assert rep.labels.fleiss is None and "different numbers" in rep.labels.fleiss_reason
    p = rep.labels.pairs[0]
    both = ~np.isnan(m[0]) & ~np.isnan(m[1])
    assert p.kappa == pytest.approx(cohen_kappa_score(m[0, both], m[1, both], weights="linear",
                                                      labels=[0, 1, 2]), abs=1e-9)  # sklearn


def test_bootstrap_is_seeded():
    rows = _project()
    a = agreement_report(rows, seed=5, n_boot=300).labels.alpha_ci
    b = agreement_report(rows, seed=5, n_boot=300).labels.alpha_ci
    c = agreement_report(rows, seed=6, n_boot=300).labels.alpha_ci
    assert (a.low, a.high) == (b.low, b.high)
    assert (a.low, a.high) != (c.low, c.high)


def test_full_report_serialises_and_ranks():
    rows = [("v1", "a", "cut"), ("v1", "b", "cut"), ("v1", "c", "cut"),
            ("v2", "a", "cut"), ("v2", "b", "pour"), ("v2", "c", "stack"),
            ("v3", "a", "pour"), ("v3", "b", "pour"), ("v3", "c", "cut")]
    segs = [("v1", "a", "cut", 0, 10), ("v1", "b", "cut", 0, 10), ("v2", "a", "cut", 0, 5)]
    caps = [("v1", "a", "a man cuts bread"), ("v1", "b", "a man cuts the bread"),
            ("v1", "c", "a man cuts bread slowly"), ("v2", "a", "someone pours water"),
            ("v2", "b", "water is poured"), ("v3", "c", "")]
    rep = agreement_report(rows, segs, caps, fps=25.0, frame_count={"v1": 10, "v2": 10},
                           n_boot=50, label_set_version="labels-v2")
    d = rep.to_dict()
    json.dumps(d, allow_nan=False)  # JSON-safe: NaN became None
    assert d["labels"]["alpha"]["recipe"]["label_set_version"] == "labels-v2"
    queue = [c.clip for c in rep.review_queue()]
    assert queue[0] == "v2"  # 1 - 1/3 majority share: the most disputed clip
    v1 = next(c for c in rep.clips if c.clip == "v1")
    # a and b match; c labelled v1 but marked no segment, so pairs with c have F1 0
    assert (v1.label_disagreement, v1.segment_f1) == (0.0, pytest.approx(1 / 3))
    text = rep.to_text()
    for needle in ("Krippendorff alpha", "Fleiss kappa", "Segments", "CIDEr-D", "Review queue",
                   "Landis"):
        assert needle in text
    reasons = {(c.clip, c.annotator): c.reason for c in rep.captions.bleu.flagged}
    assert reasons[("v3", "c")] == "empty caption"
    assert "median" in reasons[("v1", "b")]  # "the" breaks two of its bigrams and all 3-grams


def test_report_bad_rows():
    with pytest.raises(ValueError, match=r"labels\[1\]"):
        agreement_report([("v", "a", "x"), ("v", "a")])
    with pytest.raises(ValueError, match="not in label_order"):
        agreement_report([("v", "a", "x")], label_order=["y"])
    with pytest.raises(ValueError, match="n_boot"):
        agreement_report([("v", "a", "x")], n_boot=0)


def test_repeated_clip_annotator_keeps_last_row():
    rep = agreement_report([("v", "a", "x"), ("v", "b", "y"), ("v", "a", "y")], n_boot=10)
    assert rep.labels.pairs[0].observed == 1.0


def test_rouge_and_chrf_are_estimated_on_a_seeded_sample_of_clips_above_the_limit():
    """Above ``overlap_clips`` clips, leave-one-out ROUGE-L and chrF are those of a seeded
    random sample of that many clips, and their recipes say so; BLEU keeps every clip."""
    from clipscribe.agreement import leave_one_out_chrf, leave_one_out_rouge_l
    rng = random.Random(5)
    words = "the arm lifts puts red blue block cup down on".split()
    caps = [(c, a, " ".join(rng.choices(words, k=rng.randint(3, 8))))
            for c in range(40) for a in ("ann-a", "ann-b", "ann-c")]
    full = agreement_report([], captions=caps, overlap_clips=None)
    assert full.captions.chrf.recipe.note is None
    part = agreement_report([], captions=caps, overlap_clips=10, seed=3)
    note = part.captions.chrf.recipe.note
    assert note == "estimated on 10 of 40 clips, sampled with seed 3"
    assert part.captions.rouge_l.recipe.note == note
    kept = sorted(set(part.captions.chrf.clips))
    assert len(kept) == 10
    by_clip = {c: [(a, t) for c2, a, t in caps if c2 == c] for c in kept}
    assert part.captions.chrf.overall == pytest.approx(leave_one_out_chrf(by_clip).overall, abs=1e-12)
    assert part.captions.rouge_l.overall == pytest.approx(leave_one_out_rouge_l(by_clip).overall, abs=1e-12)
    assert part.captions.bleu.recipe.n_items == full.captions.bleu.recipe.n_items == 120
    again = agreement_report([], captions=caps, overlap_clips=10, seed=3)
    assert sorted(set(again.captions.chrf.clips)) == kept  # the same sample for the same seed
