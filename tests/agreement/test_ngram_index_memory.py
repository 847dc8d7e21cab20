"""The n-gram index shared by the caption metrics: built from a stream of token lists in 32-bit
integers, and not kept once a report's caption part is done (it is ~0.6 GB at 100k clips)."""

from collections import Counter

import numpy as np

from clipscribe.agreement.captions import corpus_index, ngram_counts, ngram_index
from clipscribe.agreement.report import caption_part

DOCS = [("the", "arm", "lifts", "the", "red", "block"), (), ("red", "block"), ("the", "arm")]


def test_a_stream_gives_the_same_index_as_a_list_in_32_bit_integers():
    listed = ngram_index(DOCS, 3)
    streamed = ngram_index((d for d in DOCS), 3)
    assert streamed.lengths.tolist() == [6, 0, 2, 2]
    for a, b in zip(listed.orders, streamed.orders):
        assert a.n_keys == b.n_keys
        for name in ("doc", "key", "count"):
            assert np.array_equal(getattr(a, name), getattr(b, name))
            assert getattr(b, name).dtype == np.int32


def test_the_index_counts_what_a_counter_counts():
    """Each document's n-grams and counts, read back through the vocabulary, equal
    collections.Counter over the n-gram tuples (the standard library as reference)."""
    index = ngram_index(iter(DOCS), 3)
    words = {i: w for w, i in index.vocabulary.items()}
    for n, order in enumerate(index.orders, 1):
        # decode keys of order n by rebuilding each key's n-gram from the documents
        seen: dict = {}
        for d, tokens in enumerate(DOCS):
            want = Counter({g: c for g, c in ngram_counts(tokens, 3).items() if len(g) == n})
            got = {int(k): int(c) for dd, k, c in zip(order.doc, order.key, order.count) if dd == d}
            assert sorted(got.values()) == sorted(want.values())
            if n == 1:
                assert {(words[k],): c for k, c in got.items()} == dict(want)
            seen.update(got)
        assert max(seen, default=-1) < order.n_keys


def test_a_caption_part_lets_the_shared_index_go():
    rows = [(c, a, f"the arm moves block {c} {a}") for c in range(5) for a in ("x", "y")]
    part = caption_part(rows)
    assert part.summary is not None
    assert corpus_index.cache_info().currsize == 0
