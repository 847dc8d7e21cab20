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
