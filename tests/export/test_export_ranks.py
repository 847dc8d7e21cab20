"""The low-memory id builders of the shingle table equal their plain versions."""

from __future__ import annotations

import random

import numpy as np
import pytest

from clipscribe.export import ranks


@pytest.mark.parametrize("chunk", [1, 3, 1 << 15])
def test_word_ids_number_words_by_first_appearance_across_chunks(monkeypatch, chunk):
    monkeypatch.setattr(ranks, "_WORD_CHUNK", chunk)
    rng = random.Random(chunk)
    vocab = ["red", "cube", "arm", "take", "1", "22", "bench"]
    texts = [" ".join(rng.choice(vocab) for _ in range(rng.randint(1, 6))) for _ in range(40)]
    texts[5] = ""  # an empty text is one empty word
    want: dict[str, int] = {}
    for t in texts:  # numbered by hand, one word at a time
        for w in t.split(" "):
            want.setdefault(w, len(want))
    ids, n = ranks.word_ids(texts)
    assert n == len(want)
    assert ids.tolist() == [want[w] for t in texts for w in t.split(" ")]


def test_word_ids_of_no_text():
    ids, n = ranks.word_ids([])
    assert n == 0 and ids.tolist() == []


@pytest.mark.parametrize("high", [3, 1000, 2**40, 2**62])
def test_dense_ids_equal_the_inverse_numpy_unique_gives(high):
    # reference: numpy.unique(return_inverse=True), the ranks of the distinct values
    values = np.random.default_rng(high % 97).integers(0, high, 5000, dtype=np.int64)
    want = np.unique(values, return_inverse=True)[1].ravel()
    got = ranks.dense_ids(values)
    assert got.dtype == np.int64 and got.tolist() == want.tolist()


def test_dense_ids_of_nothing_and_of_one_value():
    assert ranks.dense_ids(np.empty(0, dtype=np.int64)).tolist() == []
    assert ranks.dense_ids(np.array([7, 7, 7])).tolist() == [0, 0, 0]


def test_text_lengths_count_words_at_single_spaces():
    assert ranks.text_lengths(["a", "a b", "", "red cube on the bench"]).tolist() == [1, 2, 1, 5]


def _numbered_by_hand(texts):
    want: dict[str, int] = {}
    for t in texts:
        for w in t.split(" "):
            want.setdefault(w, len(want))
    return [want[w] for t in texts for w in t.split(" ")], len(want)


# words the packed form must tell apart: 8 and 16 bytes exactly, one byte more, a NUL inside
# (zero padding must not hide it), multi-byte UTF-8, a lone surrogate, empty words
TRICKY = ["", " ", "a  b", "ab", "ab\x00", "ab\x00 ab", "é e\u0301 É", "日本語 テキスト 日本",
          "x" * 8, "x" * 9, "x" * 16, "x" * 17, "x" * 16 + "y", "x" * 17 + " " + "x" * 16 + "z",
          "\ud800 a", "take 10469 take 1046", "a" * 300 + " " + "a" * 301]


@pytest.mark.parametrize("chunk", [1, 2, 1 << 15])
def test_word_ids_of_tricky_words_equal_numbering_by_hand(monkeypatch, chunk):
    monkeypatch.setattr(ranks, "_WORD_CHUNK", chunk)
    for texts in (TRICKY, TRICKY[::-1], TRICKY * 3):
        want, n = _numbered_by_hand(texts)
        ids, got_n = ranks.word_ids(texts)
        assert got_n == n and ids.tolist() == want
        assert ranks.word_ids_plain(texts)[0].tolist() == want


def test_word_ids_hand_a_hash_collision_to_the_plain_numbering(monkeypatch):
    # every word hashed alike: the check on the packed bytes sees different words under one
    # hash, and the plain numbering answers (with the same ids)
    monkeypatch.setattr(ranks, "_MIX", (0, 0, 0))
    calls = []
    plain = ranks.word_ids_plain
    monkeypatch.setattr(ranks, "word_ids_plain", lambda *a: calls.append(a) or plain(*a))
    ids, n = ranks.word_ids(TRICKY)
    assert calls and (ids.tolist(), n) == _numbered_by_hand(TRICKY)


def test_word_ids_pads_follow_the_ids():
    ids, n = ranks.word_ids(["red cube", "cube"], pads=2)
    assert n == 2 and ids.tolist() == [0, 1, 1, 2, 2]
    assert ranks.word_ids([], pads=2)[0].tolist() == [0, 0]  # no word: the pad is id 0


@pytest.mark.parametrize("block", [1, 7, 1 << 20])
def test_dense_ids_by_blocks_and_in_place_equal_numpy_unique(monkeypatch, block):
    monkeypatch.setattr(ranks, "BLOCK", block)
    values = np.random.default_rng(block).integers(0, 50, 300, dtype=np.int64)
    want = np.unique(values, return_inverse=True)[1].ravel().tolist()
    assert ranks.dense_ids(values).tolist() == want
    same = values.copy()
    assert ranks.dense_ids(same, out=same) is same and same.tolist() == want
