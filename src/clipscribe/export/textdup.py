"""Identical and near-identical caption text.

Two captions are *identical* when their normalised text is equal: Unicode NFKC, case folded,
every character that is not a letter, digit or space turned into a space, runs of spaces
collapsed. They are *near-identical* when the exact Jaccard similarity of their sets of word
3-gram shingles (Broder, "On the resemblance and containment of documents", SEQUENCES 1997,
doi:10.1109/SEQUEN.1997.666900) reaches a threshold; a caption of fewer than three words is
one shingle of all its words. Candidates come from a prefix-filtered shingle index (Chaudhuri,
Ganti, Kaushik, "A primitive operator for similarity joins in data cleaning", ICDE 2006,
doi:10.1109/ICDE.2006.9; Xiao et al., "Efficient similarity joins for near duplicate
detection", WWW 2008): with every set ordered by rising shingle frequency, two sets with
Jaccard >= t share a shingle among the first ``|x| - ceil(t|x|) + 1`` of each, so the search is
exact without comparing all pairs; the index is built with numpy sorts. Hand-written because the libraries that do this (MinHash
LSH) are approximate and not among the project's dependencies.
"""

from __future__ import annotations

import re
import unicodedata
from typing import Iterable, Sequence

import numpy as np

_NON_WORD = re.compile(r"[\W_]+")


def normalise_caption(text: str) -> str:
    """NFKC, case fold, punctuation to spaces, collapse whitespace."""
    text = unicodedata.normalize("NFKC", text).casefold()
    return _NON_WORD.sub(" ", text).strip()


def shingles(normalised: str, n: int = 3) -> frozenset[str]:
    """Word n-gram shingles of a normalised caption (one shingle when shorter than n words)."""
    words = normalised.split(" ")
    if len(words) < n:
        return frozenset([normalised])
    return frozenset(" ".join(words[i:i + n]) for i in range(len(words) - n + 1))


def jaccard(a: frozenset, b: frozenset) -> float:
    """|a ∩ b| / |a ∪ b| (1.0 for two empty sets)."""
    if not a and not b:
        return 1.0
    inter = len(a & b)
    return inter / (len(a) + len(b) - inter)


def _dense_ids(values: np.ndarray) -> np.ndarray:
    """Rank of each value among the distinct values (a sort-based ``np.unique`` inverse)."""
    order = np.argsort(values, kind="stable")
    sv = values[order]
    ids = np.empty(len(values), dtype=np.int64)
    ids[order] = np.cumsum(np.r_[True, sv[1:] != sv[:-1]]) - 1
    return ids


def _distinct_sorted(values: np.ndarray) -> np.ndarray:
    sv = np.sort(values)
    return sv[np.r_[True, sv[1:] != sv[:-1]]]


def _shingle_table(texts: list[str]) -> tuple[np.ndarray, np.ndarray]:
    """Distinct (text index, shingle id) entries, sorted; shingles as in :func:`shingles`."""
    vocab: dict[str, int] = {}
    words: list[int] = []
    lengths = np.empty(len(texts), dtype=np.int64)
    for k, t in enumerate(texts):
        ws = t.split(" ")
        lengths[k] = len(ws)
        words += [vocab.setdefault(w, len(vocab)) for w in ws]
    w = np.array(words, dtype=np.int64)
    base = len(vocab) + 1  # id len(vocab) pads texts shorter than three words
    ends = np.cumsum(lengths)
    starts = ends - lengths
    n_sh = np.maximum(lengths - 2, 1)
    text_of = np.repeat(np.arange(len(texts)), n_sh)
    pos = np.repeat(starts, n_sh) + (np.arange(n_sh.sum()) - np.repeat(np.cumsum(n_sh) - n_sh, n_sh))
    pad = np.append(w, [base - 1, base - 1])
    end_of = np.repeat(ends, n_sh)
    tri = np.stack([pad[pos], np.where(pos + 1 < end_of, pad[pos + 1], base - 1),
                    np.where(pos + 2 < end_of, pad[pos + 2], base - 1)], axis=1)
    if base < 2**21:  # three ids fit one int64 code
        sid = _dense_ids((tri[:, 0] * base + tri[:, 1]) * base + tri[:, 2])
    else:
        sid = np.unique(tri, axis=0, return_inverse=True)[1].ravel()
    n_sid = int(sid.max()) + 1
    key = _distinct_sorted(text_of * n_sid + sid)
    return key // n_sid, key % n_sid


def similar_pairs(texts: Iterable[str], threshold: float, *,
                  keys: Sequence[int] | None = None) -> list[tuple[int, int, float]]:
    """Pairs ``(i, j, jaccard)``, ``i < j``, of distinct texts whose shingle Jaccard >= threshold.

    ``texts`` should already be normalised and distinct. Exact (see module docstring): the
    prefix filter only prunes pairs that cannot reach the threshold, and every candidate is
    verified on its full shingle sets. ``keys`` (one int per text) skips pairs of texts that
    share the same non-negative key, e.g. texts that only occur in one and the same split.
    """
    if not 0.0 < threshold <= 1.0:
        raise ValueError(f"caption threshold must lie in (0, 1], got {threshold!r}")
    texts = list(texts)
    if len(texts) < 2:
        return []
    text, sid = _shingle_table(texts)
    size = np.bincount(text, minlength=len(texts))
    df = np.bincount(sid)
    order = np.lexsort((sid, df[sid], text))  # each text's shingles, rarest first
    text, sid = text[order], sid[order]
    first = np.cumsum(size) - size
    rank = np.arange(len(text)) - first[text]
    prefix_len = size - np.ceil(threshold * size - 1e-9).astype(np.int64) + 1
    keep = rank < prefix_len[text]
    p_text, p_sid = text[keep], sid[keep]
    by = np.lexsort((p_text, p_sid))
    p_text, p_sid = p_text[by], p_sid[by]
    # every pair of entries sharing a shingle: entry e pairs with the later entries of its run
    run_start = np.flatnonzero(np.r_[True, p_sid[1:] != p_sid[:-1]])
    run_len = np.diff(np.r_[run_start, len(p_sid)])
    offset = np.arange(len(p_sid)) - np.repeat(run_start, run_len)
    later = np.repeat(run_len, run_len) - 1 - offset
    total = int(later.sum())
    if total == 0:
        return []
    left = np.repeat(np.arange(len(p_sid)), later)
    right = left + 1 + (np.arange(total) - np.repeat(np.cumsum(later) - later, later))
    a, b = p_text[left], p_text[right]
    cand = _distinct_sorted(np.minimum(a, b) * len(texts) + np.maximum(a, b))
    a, b = cand // len(texts), cand % len(texts)
    small, big = np.minimum(size[a], size[b]), np.maximum(size[a], size[b])
    ok = small + 1e-9 >= threshold * big  # size filter: J <= |small| / |big|
    if keys is not None:
        k = np.asarray(keys, dtype=np.int64)
        ok &= (k[a] != k[b]) | (k[a] < 0)
    bounds = np.r_[first, len(text)].tolist()
    sets: dict[int, frozenset] = {}

    def set_of(k: int) -> frozenset:
        if k not in sets:
            sets[k] = frozenset(sid[bounds[k]:bounds[k + 1]].tolist())
        return sets[k]

    out = []
    for i, j in zip(a[ok].tolist(), b[ok].tolist()):
        sim = jaccard(set_of(i), set_of(j))
        if sim + 1e-12 >= threshold:
            out.append((i, j, sim))
    return out
