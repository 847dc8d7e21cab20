"""ROUGE-L, chrF and Wilson intervals against the reference implementations: rouge-score 0.1.2
(RougeScorer(["rougeL"]).score_multi), sacrebleu's CHRF (char order 6, beta 2) and
statsmodels' proportion_confint(method="wilson"); leave-one-out scores against the same
libraries called caption by caption."""

import random

import numpy as np
import pytest
import sacrebleu
from rouge_score import rouge_scorer
from statsmodels.stats.proportion import proportion_confint

from clipscribe.agreement import (corpus_chrf, leave_one_out_chrf, leave_one_out_rouge_l,
                                  proportion, rouge_l, wilson_interval)
from clipscribe.agreement.rouge import lcs_lengths

WORDS = ["a", "man", "Picks", "up", "the", "box", "puts", "down", "it's", "3.5", "cup", "-",
         "Über", "naïve", "!!", "stack", "on", "A", "table,", "(slowly)", "x"]
EDGE = ["", " ", "!!!", "a", "A a A", "ÄÖÜ", "the the the the", "a man picks up a box",
        "3.5-4.0", "\tspaced\nout  text "]


def sentences(seed, n):
    rng = random.Random(seed)
    return [" ".join(rng.choice(WORDS) for _ in range(rng.randint(0, 14))) for _ in range(n)]


SCORER = rouge_scorer.RougeScorer(["rougeL"])


def test_rouge_l_equals_rouge_score_on_random_and_edge_sentences():
    """Source: rouge-score RougeScorer(['rougeL']).score_multi (best F over references)."""
    rng = random.Random(11)
    pool = sentences(1, 300) + EDGE
    cases = [(h, [rng.choice(pool) for _ in range(rng.randint(1, 4))]) for h in pool]
    cases += [(a, [b]) for a in EDGE for b in EDGE]
    for hyp, refs in cases:
        ref = SCORER.score_multi(refs, hyp)["rougeL"]
        ours = rouge_l(hyp, refs)
        assert ours.fmeasure == pytest.approx(ref.fmeasure, abs=1e-9), (hyp, refs)
        assert ours.precision == pytest.approx(ref.precision, abs=1e-9)
        assert ours.recall == pytest.approx(ref.recall, abs=1e-9)


def test_rouge_l_known_value_and_recipe():
    # LCS of "a man picks up a box" / "a man lifts a box" is "a man a box": P=4/6, R=4/5
    s = rouge_l("a man picks up a box", ["a man lifts a box"])
    assert s.precision == pytest.approx(4 / 6) and s.recall == pytest.approx(4 / 5)
    assert s.fmeasure == pytest.approx(2 * (4 / 6) * (4 / 5) / (4 / 6 + 4 / 5))
    assert s.recipe.metric == "rouge" and s.recipe.option("stem") == "none"
    with pytest.raises(ValueError, match="no references"):
        rouge_l("x", [])


def test_lcs_lengths_by_brute_force_on_mixed_lengths():
    rng = np.random.default_rng(0)
    hyps = [list(rng.integers(0, 4, rng.integers(0, 40))) for _ in range(200)]
    refs = [list(rng.integers(0, 4, rng.integers(0, 9))) for _ in range(200)]

    def lcs(a, b):
        t = [[0] * (len(b) + 1) for _ in range(len(a) + 1)]
        for i in range(len(a)):
            for j in range(len(b)):
                t[i + 1][j + 1] = t[i][j] + 1 if a[i] == b[j] else max(t[i][j + 1], t[i + 1][j])
        return t[-1][-1]

    assert lcs_lengths(hyps, refs).tolist() == [lcs(a, b) for a, b in zip(hyps, refs)]


def test_chrf_equals_sacrebleu_on_random_and_edge_sentences():
    """Source: sacrebleu.metrics.CHRF() (char_order 6, word_order 0, beta 2)."""
    hyps = sentences(2, 250) + EDGE
    streams = [sentences(3 + j, len(hyps)) for j in range(3)]
    streams[1][:len(EDGE)] = EDGE[::-1]
    streams[2][4] = None
    ref = sacrebleu.metrics.CHRF().corpus_score(hyps, streams).score
    assert corpus_chrf(hyps, streams).score == pytest.approx(ref, abs=1e-9)
    for h in EDGE:
        for r in EDGE:
            ref = sacrebleu.metrics.CHRF().corpus_score([h], [[r]]).score
            assert corpus_chrf([h], [[r]]).score == pytest.approx(ref, abs=1e-9), (h, r)


@pytest.mark.parametrize("order, beta", [(6, 2), (3, 1), (1, 3)])
def test_chrf_options_equal_sacrebleu(order, beta):
    hyps = sentences(5, 60)
    streams = [sentences(6, 60)]
    ref = sacrebleu.metrics.CHRF(char_order=order, beta=beta).corpus_score(hyps, streams).score
    ours = corpus_chrf(hyps, streams, char_order=order, beta=beta)
    assert ours.score == pytest.approx(ref, abs=1e-9)
    assert ours.recipe.option("char_order") == str(order)


def test_chrf_bad_input():
    with pytest.raises(ValueError, match="stream 0 has 1 lines"):
        corpus_chrf(["a", "b"], [["a"]])
    with pytest.raises(ValueError, match="no hypothesis has a reference"):
        corpus_chrf(["a"], [[None]])
    with pytest.raises(ValueError, match="sequence of streams"):
        corpus_chrf(["a"], ["a"])


def loo_data(seed, per_annotator=1):
    rng = random.Random(seed)
    pool = sentences(seed, 400) + EDGE
    return {f"clip-{c}": [(f"annotator-{k}", rng.choice(pool)) for k in
                          rng.sample(range(5), rng.randint(1, 4)) for _ in range(per_annotator)]
            for c in range(120)}


def per_annotator_refs(data):
    hyps, refs = {}, {}
    for caps in data.values():
        for a, t in caps:
            others = [u for b, u in caps if b != a]
            if others:
                hyps.setdefault(a, []).append(t)
                refs.setdefault(a, []).append(others)
    return hyps, refs


def test_leave_one_out_rouge_l_equals_rouge_score_caption_by_caption():
    """Source: rouge-score score_multi of each caption against the other annotators'."""
    data = loo_data(21)
    result = leave_one_out_rouge_l(data)
    hyps, refs = per_annotator_refs(data)
    everything = []
    for a in hyps:
        scores = [SCORER.score_multi(r, h)["rougeL"].fmeasure for h, r in zip(hyps[a], refs[a])]
        everything += scores
        assert result.per_annotator[a] == pytest.approx(np.mean(scores), abs=1e-9)
    assert result.overall == pytest.approx(np.mean(everything), abs=1e-9)
    assert result.recipe.n_items == len(everything)


@pytest.mark.parametrize("per_annotator", [1, 3])
def test_leave_one_out_chrf_equals_sacrebleu_per_annotator(per_annotator):
    """Source: sacrebleu CHRF corpus_score of one annotator's captions with the other
    annotators' captions as (variable-count) reference streams; with three captions per
    annotator and clip, one's own other captions are never a reference."""
    data = loo_data(22, per_annotator)
    result = leave_one_out_chrf(data)
    hyps, refs = per_annotator_refs(data)
    for a in hyps:
        k = max(map(len, refs[a]))
        streams = [[rs[j] if j < len(rs) else None for rs in refs[a]] for j in range(k)]
        ref = sacrebleu.metrics.CHRF().corpus_score(hyps[a], streams).score
        assert result.per_annotator[a] == pytest.approx(ref, abs=1e-9)
    single = [c for c, caps in data.items() if len({a for a, _ in caps}) == 1]
    assert single and all(np.isnan(result.per_clip().get(c, np.nan)) for c in single)


def test_leave_one_out_needs_a_second_annotator():
    for f in (leave_one_out_rouge_l, leave_one_out_chrf):
        with pytest.raises(ValueError, match="another annotator"):
            f({"c": [("a", "x y"), ("a", "y z")]})


@pytest.mark.parametrize("x, n", [(0, 1), (0, 5), (5, 5), (3, 7), (1, 1000), (499, 1000),
                                  (17, 20)])
@pytest.mark.parametrize("level", [0.95, 0.9, 0.99])
def test_wilson_equals_statsmodels(x, n, level):
    """Source: statsmodels proportion_confint(count, nobs, alpha, method="wilson")."""
    lo, hi = proportion_confint(x, n, alpha=1 - level, method="wilson")
    ours = wilson_interval(x, n, level=level)
    assert ours == pytest.approx((lo, hi), abs=1e-12)


def test_wilson_vectorised_and_degenerate():
    lo, hi = wilson_interval([0, 3, 10], [10, 10, 10])
    ref = proportion_confint(np.array([0, 3, 10]), 10, method="wilson")
    np.testing.assert_allclose([lo, hi], ref, atol=1e-12)
    assert all(np.isnan(v) for v in wilson_interval(0, 0))
    with pytest.raises(ValueError, match="whole counts"):
        wilson_interval(3, 2)
    p = proportion(8, 10, what="check-accuracy")
    assert p.value == 0.8 and p.low < 0.8 < p.high
    assert p.recipe.option("interval") == "wilson" and p.to_dict()["trials"] == 10
