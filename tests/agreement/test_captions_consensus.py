"""CIDEr-D and caption retrieval: hand-worked values and degenerate input."""

import math
from collections import Counter

import numpy as np
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


def _cider_by_the_formula(data, max_order):
    """CIDEr-D written straight from the formula in cider_d's docstring (Vedantam et al. 2015,
    with idf over all clips), one caption pair at a time: the oracle for the vectorised code."""
    caps = [(c, a, t.split()) for c, items in data.items() for a, t in items]
    grams = [Counter(tuple(w[i:i + n]) for n in range(1, max_order + 1)
                     for i in range(len(w) - n + 1)) for _, _, w in caps]
    df = Counter(g for c in data for g in set().union(*[grams[i] for i, x in enumerate(caps) if x[0] == c]))
    idf = {g: math.log(len(data)) - math.log(max(1, d)) for g, d in df.items()}
    vec = [{g: k * idf[g] for g, k in cnt.items()} for cnt in grams]

    def norm(v, n):
        return math.sqrt(sum(x * x for g, x in v.items() if len(g) == n))

    out = []
    for i, (c, a, w) in enumerate(caps):
        refs = [j for j, (c2, a2, _) in enumerate(caps) if c2 == c and a2 != a]
        sims = []
        for j in refs:
            pen = math.exp(-((len(w) - len(caps[j][2])) ** 2) / 72.0)
            sim = 0.0
            for n in range(1, max_order + 1):
                nh, nr = norm(vec[i], n), norm(vec[j], n)
                if nh and nr:
                    dot = sum(min(x, vec[j][g]) * vec[j][g] for g, x in vec[i].items()
                              if len(g) == n and g in vec[j])
                    sim += dot / (nh * nr) * pen
            sims.append(sim / max_order)
        out.append(10 * sum(sims) / len(sims) if sims else math.nan)
    return out


@pytest.mark.parametrize("max_order", [1, 4])
def test_cider_d_equals_the_formula_pair_by_pair(max_order):
    rng = np.random.default_rng(max_order)
    words = "a b c d the arm lifts red block".split()
    for _ in range(60):
        data = {f"c{c}": [(f"ann{rng.integers(0, 3)}", " ".join(rng.choice(words, rng.integers(0, 8))))
                          for _ in range(rng.integers(0, 5))] for c in range(rng.integers(1, 5))}
        got = [s for *_, s in cider_d(data, max_order=max_order, tokenize="none").captions]
        assert np.allclose(got, _cider_by_the_formula(data, max_order), rtol=1e-12, atol=1e-12,
                           equal_nan=True), data


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


@pytest.mark.parametrize("limit", [1, 7, 50])
def test_cider_d_by_runs_of_clips_is_the_one_pass_bit_for_bit(monkeypatch, limit):
    """The pairs are expanded a run of whole clips at a time to bound memory; every caption's
    sum then adds the same terms in the same order, so the scores are identical, not close."""
    from clipscribe.agreement import cider
    rng = np.random.default_rng(7)
    words = "a b c d the arm lifts red block".split()
    data = {f"c{c}": [(f"ann{rng.integers(0, 3)}", " ".join(rng.choice(words, rng.integers(1, 9))))
                      for _ in range(rng.integers(0, 7))] for c in range(40)}
    whole = [s for *_, s in cider_d(data).captions]
    monkeypatch.setattr(cider, "PAIRS_PER_RUN", limit)
    runs = []
    real = cider._runs
    monkeypatch.setattr(cider, "_runs", lambda *a: runs.append(list(real(*a))) or iter(runs[-1]))
    parts = [s for *_, s in cider_d(data).captions]
    assert max(len(r) for r in runs) > 1                     # really cut into several runs
    assert np.array_equal(np.array(parts), np.array(whole), equal_nan=True)
    assert _cider_by_the_formula(data, 4) == pytest.approx(whole, rel=1e-12, nan_ok=True)
