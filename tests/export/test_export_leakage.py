"""Every leakage kind is found on crafted inputs, and clean inputs give no finding."""

from __future__ import annotations

import hashlib
import random

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from nltk.metrics.distance import jaccard_distance
from nltk.util import ngrams

from clipscribe.export import CaptionInput, ClipInput, check_leakage, normalise_caption
from clipscribe.export.textdup import shingles, similar_pairs

BASE_FP = 0x9E3779B97F4A7C15


def _flip(x: int, bits) -> int:
    for b in bits:
        x ^= 1 << b
    return x


def _clip(cid, *, group=None, sha=None, fp=None, caps=(), consent=True, licence="CC-BY-4.0"):
    return ClipInput(cid, f"{cid}.mp4", group=group,
                     sha256=sha if sha is not None else hashlib.sha256(cid.encode()).hexdigest(),
                     fingerprint=fp if fp is not None else random.Random(cid).getrandbits(64),
                     captions=tuple(CaptionInput(t) for t in caps), consent=consent,
                     licence=licence)


def _kinds(report):
    return sorted({f.kind for f in report.findings})


def test_clean_input_has_no_findings():
    clips = [_clip(f"c{i}", group=f"g{i // 2}", caps=[f"person {i} does thing {i}"])
             for i in range(10)]
    a = {c.clip_id: ("train" if int(c.group[1:]) % 2 else "test") for c in clips}
    r = check_leakage(clips, a, require_consent=True, require_licence=True)
    assert r.findings == ()
    assert r.to_dict()["blocking"] == [] and r.to_dict()["recipe"]["hamming_radius"] == 8


def test_group_in_two_splits_is_blocking():
    clips = [_clip("a", group="p1"), _clip("b", group="p1"), _clip("c", group="p2")]
    r = check_leakage(clips, {"a": "train", "b": "test", "c": "test"})
    [f] = r.blocking
    assert (f.kind, f.clips, f.details["splits"]) == ("group-split", ("a", "b"),
                                                     {"test": 1, "train": 1})


def test_identical_media_across_splits_blocking_within_split_warning():
    sha1, sha2 = "a" * 64, "b" * 64
    clips = [_clip("a", sha=sha1), _clip("b", sha=sha1), _clip("c", sha=sha2), _clip("d", sha=sha2)]
    r = check_leakage(clips, {"a": "train", "b": "test", "c": "train", "d": "train"})
    assert [(f.kind, f.clips) for f in r.blocking] == [("duplicate-media", ("a", "b"))]
    assert [(f.kind, f.clips) for f in r.warnings] == [("duplicate-media-in-split", ("c", "d"))]


def test_near_duplicate_fingerprints_across_splits():
    clips = [_clip("a", fp=BASE_FP), _clip("b", fp=_flip(BASE_FP, [1, 30, 63])),   # 3 bits
             _clip("c", fp=_flip(BASE_FP, range(0, 63, 7))),                       # 9 bits
             _clip("d", fp=_flip(BASE_FP, [5]))]                                    # same split
    r = check_leakage(clips, {"a": "train", "b": "test", "c": "test", "d": "train"})
    near = [f for f in r.findings if f.kind == "near-duplicate-media"]
    # b is 3 bits from a and 4 from d, a-d is 1 bit; c is 9 from a (outside radius 8), 12 from
    # b and 10 from d: one cluster {a, b, d} across train and test, c in none
    [f] = near
    assert (f.clips, f.files, f.severity) == (("a", "b", "d"), ("a.mp4", "b.mp4", "d.mp4"),
                                              "blocking")
    assert f.details["splits"] == {"test": 1, "train": 2}
    assert len(f.details["links"]) == 2  # a spanning tree of the three
    assert f.details["crossing"] and all({"b"} & set(x[:2]) for x in f.details["crossing"])
    assert {tuple(x) for x in f.details["crossing"]} <= {("a", "b", 3), ("b", "d", 4)}
    wider = check_leakage(clips, {"a": "train", "b": "test", "c": "test", "d": "train"},
                          hamming_radius=9)
    [f] = [f for f in wider.findings if f.kind == "near-duplicate-media"]
    assert f.clips == ("a", "b", "c", "d") and f.details["hamming"] <= 9


def test_identical_media_is_not_reported_twice_as_near_duplicate():
    clips = [_clip("a", sha="c" * 64, fp=BASE_FP), _clip("b", sha="c" * 64, fp=BASE_FP)]
    assert _kinds(check_leakage(clips, {"a": "train", "b": "test"})) == ["duplicate-media"]


def test_identical_caption_after_normalisation():
    clips = [_clip("a", caps=["A man  opens the DOOR."]), _clip("b", caps=["a man opens the door"])]
    r = check_leakage(clips, {"a": "train", "b": "test"})
    [f] = r.warnings
    assert (f.kind, f.clips, f.details["text"]) == ("duplicate-caption", ("a", "b"),
                                                    "a man opens the door")
    assert r.blocking == []


def test_near_identical_caption_jaccard_matches_nltk():
    words = "a woman in a red coat walks her small dog along the river bank on a cold and " \
            "windy winter morning".split()
    assert len(words) == 21
    one, other = " ".join(words), " ".join(words[:-1] + ["tonight"])
    # Reference: NLTK's jaccard_distance over word 3-grams (nltk.util.ngrams); 18/20 = 0.9.
    ref = 1 - jaccard_distance(set(ngrams(one.split(), 3)), set(ngrams(other.split(), 3)))
    assert ref == pytest.approx(0.9)
    clips = [_clip("a", caps=[one]), _clip("b", caps=[other])]
    r = check_leakage(clips, {"a": "train", "b": "val"}, caption_threshold=0.9)
    [f] = [f for f in r.findings if f.kind == "near-duplicate-caption"]
    assert f.details["jaccard"] == pytest.approx(ref) and f.severity == "warning"
    stricter = check_leakage(clips, {"a": "train", "b": "val"}, caption_threshold=0.95)
    assert "near-duplicate-caption" not in _kinds(stricter)


@pytest.mark.parametrize("threshold", [0.3, 0.5, 0.9, 1.0])
def test_similar_pairs_equals_all_pairs_nltk_reference(threshold):
    rng = random.Random(5)
    vocab = "a the man woman dog ball runs walks jumps red blue park".split()
    base = [" ".join(rng.choice(vocab) for _ in range(rng.randint(2, 9))) for _ in range(60)]
    long = [" ".join(rng.choice(vocab) for _ in range(20)) for _ in range(10)]
    variants = [t + " park" for t in base[:30] + long]
    texts = sorted({normalise_caption(t) for t in base + long + variants})
    got = [(i, j) for i, j, _ in similar_pairs(texts, threshold)]
    sets = [set(shingles(t)) for t in texts]
    want = [(i, j) for i in range(len(texts)) for j in range(i + 1, len(texts))
            if 1 - jaccard_distance(sets[i], sets[j]) >= threshold - 1e-12]
    assert got == want and (len(want) >= 10 or threshold == 1.0)


def test_consent_and_licence_required():
    clips = [_clip("a", consent=None), _clip("b", consent=False), _clip("c", licence=""),
             _clip("d")]
    a = dict.fromkeys("abcd", "train")
    assert check_leakage(clips, a).findings == ()  # not required: no finding
    r = check_leakage(clips, a, require_consent=True, require_licence=True)
    assert [(f.kind, f.clips) for f in r.blocking] == [("missing-consent", ("a", "b")),
                                                       ("missing-licence", ("c",))]


def test_missing_checksum_and_fingerprint_are_warnings():
    c = ClipInput("a", "a.mp4")
    r = check_leakage([c, _clip("b")], {"a": "train", "b": "test"})
    assert [f.kind for f in r.warnings] == ["no-checksum", "no-fingerprint"]
    assert r.blocking == []


def test_clips_outside_assignment_are_ignored():
    clips = [_clip("a", sha="d" * 64), _clip("b", sha="d" * 64)]
    assert check_leakage(clips, {"a": "train"}).findings == ()


@pytest.mark.parametrize("kw", [{"hamming_radius": 64}, {"hamming_radius": -1},
                                {"caption_threshold": 0.0}, {"caption_threshold": 1.5}])
def test_bad_settings_rejected(kw):
    with pytest.raises(ValueError):
        check_leakage([], {}, **kw)


def test_similar_pairs_skips_texts_with_the_same_key():
    texts = ["a b c d e f g h i j k", "a b c d e f g h i j k l", "x y z"]
    assert [(i, j) for i, j, _ in similar_pairs(texts, 0.8)] == [(0, 1)]
    assert similar_pairs(texts, 0.8, keys=[2, 2, 0]) == []
    assert len(similar_pairs(texts, 0.8, keys=[-1, -1, 0])) == 1  # -1: spans several splits


@pytest.mark.parametrize("raw,norm", [
    ("A man  opens the DOOR.", "a man opens the door"),
    ("snake_case, tabs\tand\nnew-lines!", "snake case tabs and new lines"),
    ("Ｆｕｌｌｗｉｄｔｈ  Café—open", "fullwidth café open"),  # NFKC folds full-width letters
    ("STRASSE straße", "strasse strasse"),  # str.casefold folds ß to ss
    ("  ...  ", ""),
])
def test_caption_normalisation(raw, norm):
    # Expected values worked by hand from Unicode NFKC and case folding (Python's unicodedata
    # and str.casefold implement Unicode's definitions).
    assert normalise_caption(raw) == norm


def test_ascii_fast_path_matches_the_general_rule():
    import re
    import unicodedata
    rng = random.Random(0)
    alphabet = "abcXYZ019 _-.,;:!?'\"()[]{}\t\n/\\@#$%^&*+=<>|~`"
    for _ in range(300):
        t = "".join(rng.choice(alphabet) for _ in range(rng.randint(0, 30)))
        general = re.sub(r"[\W_]+", " ", unicodedata.normalize("NFKC", t).casefold()).strip()
        assert normalise_caption(t) == general


def test_batch_normalisation_equals_one_text_at_a_time():
    from clipscribe.export.textdup import normalise_captions
    rng = random.Random(1)
    # ASCII punctuation and whitespace, the batch separator (NUL) and non-ASCII text mixed
    alphabet = "abcXYZ019 _-.,;:!?'\"()\t\n\x00\x1f/" + "\u00c9\u00df\ufb01\u2003\u0130"
    texts = ["".join(rng.choice(alphabet) for _ in range(rng.randint(0, 25)))
             for _ in range(500)] + ["", "  ", "\x00", "A  b", "\u00c9T\u00c9"]
    rng.shuffle(texts)
    assert normalise_captions(texts) == [normalise_caption(t) for t in texts]
    ascii_only = [t for t in texts if t.isascii() and "\x00" not in t]
    assert len(ascii_only) > 50
    assert normalise_captions(ascii_only) == [normalise_caption(t) for t in ascii_only]
    assert normalise_captions([]) == []


def test_near_duplicates_of_different_groups_within_one_split_are_a_warning_per_cluster():
    far = _flip(BASE_FP, range(0, 64, 2))  # 32 bits from BASE_FP: another scene
    clips = [_clip("a", fp=BASE_FP), _clip("b", fp=_flip(BASE_FP, [3])),            # 1 bit
             _clip("c", fp=_flip(BASE_FP, [3, 10, 20, 30, 40, 50, 60, 61, 62])),   # 8 from b, 9 from a
             _clip("x", fp=far), _clip("y", fp=_flip(far, [7, 9])),                # 2 bits
             _clip("z", fp=_flip(BASE_FP, [1, 2]))]                                # in test
    a = {"a": "train", "b": "train", "c": "train", "x": "train", "y": "train", "z": "test"}
    r = check_leakage(clips, a)
    within = [f for f in r.findings if f.kind == "near-duplicate-media-in-split"]
    # z in test is near a and b, so a-b-c-z is one cluster (a-c is 9 bits, beyond radius 8,
    # joined by the chain through b) across splits: it blocks as a whole
    [block] = r.blocking
    assert (block.kind, block.clips) == ("near-duplicate-media", ("a", "b", "c", "z"))
    assert {tuple(x[:2]) for x in block.details["crossing"]} <= {("a", "z"), ("b", "z")}
    assert [(f.clips, f.severity, f.details["split"]) for f in within] == [
        (("x", "y"), "warning", "train")]
    assert within[0].details["links"] == [["x", "y", 2]]
    assert "different groups" in within[0].message
    # without z, a-b-c are one cluster within train through b
    r = check_leakage(clips[:5], {k: v for k, v in a.items() if k != "z"})
    within = [f for f in r.findings if f.kind == "near-duplicate-media-in-split"]
    assert [f.clips for f in within] == [("a", "b", "c"), ("x", "y")] and r.blocking == []
    assert within[0].details["links"] == [["a", "b", 1], ["b", "c", 8]]
    strict = check_leakage(clips, a, hamming_radius=1)
    assert [f.clips for f in strict.findings if f.kind == "near-duplicate-media-in-split"] == [
        ("a", "b")]


def test_identical_media_within_a_split_is_not_also_a_near_duplicate_cluster():
    clips = [_clip("a", sha="d" * 64, fp=BASE_FP), _clip("b", sha="d" * 64, fp=BASE_FP)]
    assert _kinds(check_leakage(clips, {"a": "train", "b": "train"})) == ["duplicate-media-in-split"]


def test_look_alikes_of_one_group_in_one_split_are_expected_and_not_reported():
    clips = [_clip("a", group="cam-1", fp=BASE_FP), _clip("b", group="cam-1", fp=_flip(BASE_FP, [3])),
             _clip("c", group="cam-2", fp=_flip(BASE_FP, [9]))]
    r = check_leakage(clips, {"a": "train", "b": "train", "c": "train"})
    [f] = [f for f in r.findings if f.kind == "near-duplicate-media-in-split"]
    assert f.clips == ("a", "b", "c")  # one cluster holding two groups
    near = {("a", "b", 1), ("a", "c", 1), ("b", "c", 2)}  # every near pair of the three
    assert len(f.details["links"]) == 2 and {tuple(x) for x in f.details["links"]} <= near
    same = [_clip("a", group="cam-1", fp=BASE_FP), _clip("b", group="cam-1", fp=_flip(BASE_FP, [3]))]
    assert _kinds(check_leakage(same, {"a": "train", "b": "train"})) == []


def test_clips_of_each_caption_text_as_one_set_per_text():
    from collections import defaultdict

    from clipscribe.export.caption_groups import _clips_of_text
    rng = random.Random(3)
    owners = [rng.choice("abcdefgh") for _ in range(400)]
    norms = [rng.choice(["", "x", "y z", "w"] + [f"t{k}" for k in range(300)]) for _ in owners]
    want = defaultdict(set)
    for clip, text in zip(owners, norms):
        if text:
            want[text].add(clip)
    got = _clips_of_text(owners, norms)
    assert sorted(got.one) == sorted(want)  # every non-empty text, once
    assert {t: got[t] for t in want} == dict(want)
    assert sorted(got) == sorted(t for t, ids in want.items() if len(ids) > 1)
    assert {t for t, ids in want.items() if len(ids) > 1} and {t for t in want if len(want[t]) == 1}
    same = _clips_of_text(["a", "a", "b"], ["x", "x", "y"])  # one clip writing a text twice
    assert dict(same) == {} and same["x"] == {"a"} and sorted(same.one) == ["x", "y"]


@pytest.mark.parametrize("chunk", [1, 2, 5, 1 << 15])
def test_batch_normalisation_of_tricky_ascii_equals_one_text_at_a_time(monkeypatch, chunk):
    # every text ASCII without NUL: the whole-chunk path (bytes and numpy) answers alone
    from clipscribe.export import textdup
    monkeypatch.setattr(textdup, "_NORMALISE_CHUNK", chunk)
    texts = ["", " ", "   \t\n ", "...", "A", " Robot ARM, picks up the RED block. ",
             "a\x1fb", "x" * 5000 + "  !  " + "y" * 3000, "take 0", "Take_0--TAKE 0 ", "9"]
    assert textdup.normalise_captions(texts) == [normalise_caption(t) for t in texts]


@settings(max_examples=200, deadline=None)
@given(st.lists(st.text(alphabet=st.characters(max_codepoint=0x2FFF), max_size=30), max_size=12))
def test_batch_normalisation_equals_one_text_at_a_time_on_any_text(texts):
    from clipscribe.export.textdup import normalise_captions
    assert normalise_captions(texts) == [normalise_caption(t) for t in texts]
