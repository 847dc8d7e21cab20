"""CIDEr-D and caption retrieval: hand-worked values and degenerate input."""

import math

import pytest

from clipscribe.agreement import caption_retrieval, cider_d


def test_cider_d_hand_computed_unigrams():
    # Worked by hand from the formula of Vedantam et al. (2015), CVPR, doi:10.1109/CVPR.2015.7299087
    # Two clips, so idf = log 2 - log 1 for every word. "a b" vs "a c": cosine 1/2 -> 5.0;
    # identical captions -> 10.
    res = cider_d({"A": ["a b", "a c"], "B": ["d e", "d e"]}, max_order=1, tokenize="none")
    scores = {(c, a): s for c, a, s in res.captions}
    assert scores[("A", "#0")] == pytest.approx(5.0)
    assert scores[("B", "#1")] == pytest.approx(10.0)
    assert res.overall == pytest.approx(7.5)


def test_cider_d_clipping_and_length_penalty():
    # h = "a b", r = "a b b" (idf L): dot = L*L + L*2L, norms sqrt(2)L, sqrt(5)L -> 3/sqrt(10);
    # reversed, the clip min(2L, L) gives 2/sqrt(10); one token apart: exp(-1 / (2 * 6^2)).
    res = cider_d({"A": ["a b", "a b b"], "B": ["x", "x"]}, max_order=1, tokenize="none")
    scores = {(c, a): s for c, a, s in res.captions}
    pen = math.exp(-1 / 72)
    assert scores[("A", "#0")] == pytest.approx(10 * 3 / math.sqrt(10) * pen)
    assert scores[("A", "#1")] == pytest.approx(10 * 2 / math.sqrt(10) * pen)


def test_cider_d_degenerate():
    one_clip = cider_d({"A": ["a b c d e", "a b c d e"]})
    assert one_clip.overall == 0.0  # one clip: every idf is log 1 - log 1 = 0
    alone = cider_d({"A": [("ann", "a b")], "B": ["c d e f", "c d e f"]})
    assert math.isnan(dict(((c, a), s) for c, a, s in alone.captions)[("A", "ann")])
    assert alone.per_annotator == {"#0": 10.0, "#1": 10.0}


def test_retrieval_specific_captions_rank_first():
    data = {f"clip{i}": [f"w{i} apple", f"w{i} pear", f"w{i} plum"] for i in range(20)}
    res = caption_retrieval(data, seed=1)
    assert (res.r_at_1, res.median_rank) == (1.0, 1.0)
    assert res.recipe.n_items == 20


def test_retrieval_generic_captions_rank_last():
    data = {f"clip{i}": ["a person", "a person"] for i in range(12)}
    res = caption_retrieval(data)
    assert res.r_at_1 == 0.0 and res.r_at_10 == 0.0 and res.median_rank == 12.0  # ties count against


def test_retrieval_gallery_sampled_and_too_small():
    data = {f"clip{i}": [f"w{i} x", f"w{i} y"] for i in range(30)}
    res = caption_retrieval(data, max_gallery=10)
    assert res.recipe.option("sampled") == "True" and len(res.ranks) == 10
    assert math.isnan(caption_retrieval({"a": ["x", "y"], "b": ["z"]}).r_at_1)
    with pytest.raises(ValueError, match="max_gallery"):
        caption_retrieval(data, max_gallery=1)
