"""BLEU checked against sacrebleu, NLTK and the worked examples of Papineni et al. (2002)."""

import random

import numpy as np
import pytest
import sacrebleu
from hypothesis import given, settings
from hypothesis import strategies as st
from nltk.translate.bleu_score import corpus_bleu as nltk_corpus_bleu
from sacrebleu.tokenizers.tokenizer_13a import Tokenizer13a

from clipscribe.agreement import corpus_bleu, leave_one_out_bleu, sentence_bleu
from clipscribe.agreement.bleu import segment_stats
from clipscribe.agreement.captions import tokenize_13a

# Papineni et al. (2002), ACL, section 2.1, example 1 (candidates and references as printed in
# the paper, final periods dropped so the paper's word counts apply).
REFS_P1 = [
    "It is a guide to action that ensures that the military will forever heed Party commands",
    "It is the guiding principle which guarantees the military forces always being under the "
    "command of the Party",
    "It is the practical guide for the army always to heed the directions of the party",
]
CAND_1 = "It is a guide to action which ensures that the military always obeys the commands of the party"
CAND_2 = "It is to insure the troops forever hearing the activity guidebook that party direct"


def test_papineni_modified_unigram_precision():
    refs = [r.split() for r in REFS_P1]
    _, _, c, t = segment_stats(CAND_1.split(), refs, 2)
    assert (c[0], t[0]) == (17, 18)  # Papineni et al. (2002): candidate 1, 17/18
    # bigram precision 10/17 is printed in the same section (value from memory, confirmed here)
    assert (c[1], t[1]) == (10, 17)
    _, _, c2, t2 = segment_stats(CAND_2.split(), refs, 2)
    assert (c2[0], t2[0]) == (8, 14)  # Papineni et al. (2002): candidate 2, 8/14
    assert (c2[1], t2[1]) == (1, 13)  # ibid., 1/13 (from memory, confirmed here)


def test_papineni_the_the_the():
    # Papineni et al. (2002), section 2.1: "the the the the the the the" scores 2/7 against
    # "The cat is on the mat." and "There is a cat on the mat." (matching is case-blind there).
    s = corpus_bleu(["the the the the the the the"],
                    [["the cat is on the mat .", "there is a cat on the mat ."]],
                    max_order=1, tokenize="none")
    assert s.precisions[0] == pytest.approx(100 * 2 / 7, abs=1e-12)


WORDS = "a the man woman dog cat runs sits on in park ball red , . ( ) 3.5 1,000 x-ray 'n'".split()


def _corpus(rng: random.Random, n: int, max_refs: int, lo: int = 0, hi: int = 14):
    def sent():
        return " ".join(rng.choice(WORDS) for _ in range(rng.randint(lo, hi)))

    hyps = [sent() for _ in range(n)]
    refs = [[sent() for _ in range(rng.randint(1, max_refs))] for _ in range(n)]
    return hyps, refs


def _sacre(hyps, refs, **kw):
    width = max(len(r) for r in refs)
    streams = [[r[k] if k < len(r) else None for r in refs] for k in range(width)]
    return sacrebleu.corpus_bleu(hyps, streams, **kw)  # None pads uneven reference counts


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**32 - 1), st.sampled_from(["13a", "none"]),
       st.sampled_from([None, "floor", "add-k", "exp"]), st.integers(1, 5))
def test_corpus_bleu_matches_sacrebleu(seed, tok, smooth, max_refs):
    rng = random.Random(seed)
    hyps, refs = _corpus(rng, rng.randint(1, 30), max_refs, lo=rng.choice([0, 3]))
    ours = corpus_bleu(hyps, refs, tokenize=tok, smooth=smooth)
    ref = _sacre(hyps, refs, tokenize=tok, smooth_method=smooth or "none")  # sacrebleu
    assert ours.score == pytest.approx(ref.score, abs=1e-9)
    assert ours.precisions == pytest.approx(ref.precisions, abs=1e-9)
    assert ours.brevity_penalty == pytest.approx(ref.bp, abs=1e-12)
    assert (ours.hyp_len, ours.ref_len) == (ref.sys_len, ref.ref_len)


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(1, 4))
def test_corpus_bleu_matches_nltk(seed, max_order):
    rng = random.Random(seed)
    # NLTK counts max(1, n-grams) per segment in the precision denominator, so hypotheses
    # shorter than max_order would differ by design; keep them at least max_order long.
    hyps, refs = _corpus(rng, rng.randint(1, 20), 4, lo=max_order)
    weights = tuple([1.0 / max_order] * max_order)
    ref = nltk_corpus_bleu([[r.split() for r in rs] for rs in refs], [h.split() for h in hyps],
                           weights=weights)  # NLTK, no smoothing
    ours = corpus_bleu(hyps, refs, tokenize="none", max_order=max_order)
    assert ours.score / 100 == pytest.approx(ref, abs=1e-9)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.sampled_from(list("ab9 0.,-'\"&;<>()[]{}!?/\\@#$%^*_=+|~`:\n\t")
                               + ["&quot;", "&amp;", "&lt;", "&gt;", "<skipped>", "-\n", "é",
                                  "3,5", "1.0", "word"]), max_size=40).map("".join))
def test_13a_tokenizer_equals_sacrebleu(text):
    assert " ".join(tokenize_13a(text)) == Tokenizer13a()(text.rstrip())  # sacrebleu 13a


def test_sentence_bleu_matches_sacrebleu_sentence_bleu():
    rng = random.Random(7)
    for _ in range(50):
        hyps, refs = _corpus(rng, 1, 4, lo=1, hi=8)
        ref = sacrebleu.sentence_bleu(hyps[0], refs[0])  # sacrebleu: exp smoothing, eff. order
        assert sentence_bleu(hyps[0], refs[0]).score == pytest.approx(ref.score, abs=1e-9)


# -- degenerate input --------------------------------------------------------------------------
def test_empty_caption_and_short_hypothesis():
    empty = corpus_bleu([""], [["a man runs"]])
    assert empty.score == 0.0 and empty.hyp_len == 0 and empty.brevity_penalty == 0.0
    short = corpus_bleu(["a man runs"], [["a man runs in the park", "a man runs fast home"]],
                        max_order=3)
    assert short.precisions == [100.0, 100.0, 100.0]
    assert short.ref_len == 5  # closest of 6 and 5 is 5
    assert short.brevity_penalty == pytest.approx(np.exp(1 - 5 / 3))


def test_closest_reference_length_ties_go_to_shorter():
    s = corpus_bleu(["a b c d"], [["a b c d e", "a b c"]])
    assert s.ref_len == 3  # |4-5| == |4-3|: the shorter one (sacrebleu and NLTK agree)


def test_no_references():
    s = corpus_bleu(["a b", "c d"], [[], ["c d"]], max_order=2)
    assert s.score == pytest.approx(100.0) and "1 items without references skipped" in s.recipe.note
    with pytest.raises(ValueError, match="no hypothesis has a reference"):
        corpus_bleu(["a"], [[]])
    with pytest.raises(ValueError, match="no references"):
        sentence_bleu("a", [])


def test_zero_precision_gives_zero_without_smoothing():
    assert corpus_bleu(["a b c d"], [["a b x y"]]).score == 0.0
    assert corpus_bleu(["a b c d"], [["a b x y"]], smooth="exp").score > 0.0


@pytest.mark.parametrize("call,message", [
    (lambda: corpus_bleu(["a"], [["a"], ["b"]]), "one list of references per hypothesis"),
    (lambda: corpus_bleu("a", [["a"]]), "not one string"),
    (lambda: corpus_bleu([1], [["a"]]), "must be a string"),
    (lambda: corpus_bleu(["a"], [["a"]], tokenize="intl"), "tokenize="),
    (lambda: corpus_bleu(["a"], [["a"]], smooth="add-one"), "smooth="),
    (lambda: corpus_bleu(["a"], [["a"]], max_order=0), "max_order"),
    (lambda: leave_one_out_bleu({1: "a b"}), "not one string"),
    (lambda: leave_one_out_bleu({1: ["a b"]}), "undefined"),
])
def test_bad_input(call, message):
    with pytest.raises(ValueError, match=message):
        call()


# -- leave-one-out -----------------------------------------------------------------------------
@settings(max_examples=25, deadline=None)
@given(st.integers(0, 2**32 - 1), st.sampled_from(["13a", "none"]))
def test_leave_one_out_matches_sacrebleu_per_annotator(seed, tok):
    rng = random.Random(seed)
    names = ["ann-a", "ann-b", "ann-c", "ann-d"]
    data = {}
    for clip in range(rng.randint(1, 25)):
        caps = [(a, " ".join(rng.choice(WORDS[:12]) for _ in range(rng.randint(0, 10))))
                for a in rng.sample(names, rng.randint(1, 4))]
        if caps and rng.random() < 0.2:  # the same annotator twice on one clip
            caps.append((caps[0][0], "a man runs in the park"))
        data[f"clip-{clip}"] = caps
    try:
        res = leave_one_out_bleu(data, tokenize=tok)
    except ValueError:
        assert all(len({a for a, _ in c}) < 2 for c in data.values())
        return
    for name in names:
        hyps, refs = [], []
        for caps in data.values():
            others = [t for a, t in caps if a != name]
            for a, t in caps:
                if a == name and others:
                    hyps.append(t)
                    refs.append(others)
        if not hyps:
            assert name not in res.per_annotator
            continue
        ref = _sacre(hyps, refs, tokenize=tok, smooth_method="none")  # sacrebleu, per annotator
        assert res.per_annotator[name].score == pytest.approx(ref.score, abs=1e-9)
        assert res.per_annotator[name].precisions == pytest.approx(ref.precisions, abs=1e-9)
    for c in res.captions:  # sentence scores equal sacrebleu's sentence_bleu on the same refs
        others = [t for a, t in data[c.clip] if a != c.annotator]
        if others:
            assert c.bleu == pytest.approx(
                sacrebleu.sentence_bleu(c.text, others, tokenize=tok).score, abs=1e-9)
        else:
            assert np.isnan(c.bleu)


def test_flagging_rule():
    data = {"v": [("a", "a man throws a red ball in the park"),
                  ("b", "a man throws a red ball in a park"),
                  ("c", "a man throws the red ball in the park"),
                  ("d", "purple elephants sing opera"),
                  ("e", "")]}
    res = leave_one_out_bleu(data)
    flagged = {c.annotator: c.reason for c in res.flagged}
    assert set(flagged) == {"d", "e"}
    assert flagged["e"] == "empty caption" and "median" in flagged["d"]
