"""Caption text handling shared by the caption metrics: tokenization and n-gram counting.

The default tokenization, ``"13a"``, is the one WMT's mteval-v13a script applies and sacrebleu
calls ``13a``: it splits ASCII punctuation from words, keeps ``'`` and ``-`` inside words, and
splits ``.`` and ``,`` unless they sit between digits. It is written here (a few regular
expressions) because caption metrics must not depend on an evaluation package at run time;
tests check it token for token against sacrebleu's. ``"none"`` splits on whitespace only.
"""

from __future__ import annotations

import functools

import re
from collections import Counter
from dataclasses import dataclass
from functools import lru_cache
from typing import Iterable, Iterator, Sequence

import numpy as np

from . import _checks

# Steps of mteval-v13a after unescaping, applied in this order (order matters: the period and
# comma rules see the spaces that earlier rules put in).
_SYMBOL_CHARS = "".join(chr(c) for c in range(0x21, 0x7F)
                        if not chr(c).isalnum() and chr(c) not in "',-.")
# one character at a time, so a translation table does what a regex substitution would, faster
_SYMBOLS = str.maketrans({c: f" {c} " for c in _SYMBOL_CHARS})  # ASCII punctuation but ' , - .
_STOP_AFTER_NON_DIGIT = re.compile(r"([^0-9])([.,])")
_STOP_BEFORE_NON_DIGIT = re.compile(r"([.,])([^0-9])")
_DASH_AFTER_DIGIT = re.compile(r"([0-9])(-)")
_ENTITIES = (("&quot;", '"'), ("&amp;", "&"), ("&lt;", "<"), ("&gt;", ">"))


@lru_cache(maxsize=1 << 16)
def tokenize_13a(text: str) -> tuple[str, ...]:
    """Tokens of ``text`` under mteval-v13a rules (trailing whitespace ignored).

    Examples
    --------
    >>> tokenize_13a("A man, 3.5 m tall, (waves).")
    ('A', 'man', ',', '3.5', 'm', 'tall', ',', '(', 'waves', ')', '.')
    """
    line = text.rstrip().replace("<skipped>", "").replace("-\n", "").replace("\n", " ")
    if "&" in line:
        for entity, char in _ENTITIES:
            line = line.replace(entity, char)
    line = f" {line} ".translate(_SYMBOLS)
    if "." in line or "," in line:
        line = _STOP_AFTER_NON_DIGIT.sub(r"\1 \2 ", line)
        line = _STOP_BEFORE_NON_DIGIT.sub(r" \1 \2", line)
    if "-" in line:
        line = _DASH_AFTER_DIGIT.sub(r"\1 \2 ", line)
    return tuple(line.split())


def tokenize_none(text: str) -> tuple[str, ...]:
    """Whitespace split only."""
    return tuple(text.split())


def tokenizer(name: str):
    """The tokenizer function called ``name`` ("13a" or "none")."""
    _checks.choice("tokenize", name, _checks.TOKENIZERS)
    return tokenize_13a if name == "13a" else tokenize_none


def ngram_counts(tokens: Sequence[str], max_order: int) -> Counter:
    """Counts of all n-grams (as tuples) of orders 1..max_order."""
    c: Counter = Counter()
    n_tok = len(tokens)
    for n in range(1, max_order + 1):
        c.update(tuple(tokens[i:i + n]) for i in range(n_tok - n + 1))
    return c


@dataclass(frozen=True)
class NgramOrder:
    """Distinct n-grams of one order per document: parallel arrays, sorted by (doc, key)."""

    doc: np.ndarray
    key: np.ndarray
    count: np.ndarray
    n_keys: int


@dataclass(frozen=True)
class NgramIndex:
    """All n-grams of orders 1..max_order of many documents, as integer arrays.

    Each caption's n-grams are counted once here and then reused by every metric.
    """

    lengths: np.ndarray
    orders: tuple[NgramOrder, ...]
    vocabulary: dict


def ngram_index(token_lists: Iterable[Sequence[str]], max_order: int) -> NgramIndex:
    """Build an :class:`NgramIndex`; an n-gram's key is a dense id shared across documents.

    ``token_lists`` may be a generator: each document's tokens are turned into word ids as they
    come and then let go, so a corpus of a million captions never holds all of its token
    tuples at once (they cost more than the index). The index keeps 32-bit integers."""
    vocab: dict = {}
    sizes: list[int] = []

    def words() -> Iterator[str]:
        for tokens in token_lists:
            sizes.append(len(tokens))
            yield from tokens

    ids = np.fromiter((vocab.setdefault(w, len(vocab)) for w in words()), dtype=np.int64)
    lengths = np.array(sizes, dtype=np.int64)
    doc = np.repeat(np.arange(len(lengths)), lengths)
    starts = np.concatenate([[0], np.cumsum(lengths)[:-1]]) if len(lengths) else lengths
    remaining = lengths[doc] - (np.arange(len(ids)) - starts[doc]) if len(ids) else ids
    del starts
    orders = []
    prev = ids  # dense key of the (n-1)-gram starting at each position, where valid
    n_vocab = max(len(vocab), 1)
    for n in range(1, max_order + 1):
        valid = np.flatnonzero(remaining >= n)
        if n == 1:  # word ids are dense already, numbered in order of first appearance
            dense, n_keys = ids, n_vocab
        else:
            keys, dense = np.unique(prev[valid] * n_vocab + ids[valid + n - 1], return_inverse=True)
            n_keys = max(len(keys), 1)
            del keys
        full = np.full(len(ids), -1, dtype=np.int64)
        full[valid] = dense
        pair, cnt = np.unique(doc[valid] * n_keys + dense, return_counts=True)
        del dense, valid
        prev = full
        orders.append(NgramOrder((pair // n_keys).astype(np.int32), (pair % n_keys).astype(np.int32),
                                 cnt.astype(np.int32), n_keys))
        del pair, cnt
    return NgramIndex(lengths, tuple(orders), vocab)


@functools.lru_cache(maxsize=1)
def corpus_index(texts: tuple[str, ...], tokenize: str, max_order: int) -> NgramIndex:
    """The :class:`NgramIndex` of ``texts`` tokenized by ``tokenize``. The last corpus is
    kept, so the caption metrics of one report (leave-one-out BLEU, CIDEr-D) tokenize and count
    each caption once between them; the texts themselves are the key, so it is never stale."""
    tok = tokenizer(tokenize)
    return ngram_index((tok(t) for t in texts), max_order)
