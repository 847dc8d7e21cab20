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
exact without comparing all pairs; the index is built with numpy sorts. Hand-written because
the libraries that do this (MinHash LSH) are approximate and not among the project's
dependencies. Clusters of near-identical texts (:func:`caption_clusters`) are found without
any pair search, through keys of the shingles two texts share (:mod:`.corekeys`).
"""

from __future__ import annotations

import re
import unicodedata
from typing import Iterable, Sequence

import numpy as np

from .clusters import Clusters, cover_components, union
from .corekeys import core_join, key_counts
from .ranks import BLOCK, dense_ids, distinct_sorted, text_lengths, word_ids

_NON_WORD = re.compile(r"[\W_]+")
# For ASCII text the same mapping as _NON_WORD, done by str.translate (several times faster).
_ASCII_NON_WORD = {c: " " for c in range(128) if not chr(c).isalnum()}
# NUL separates the texts of one batch in normalise_captions.
_BATCH_SEP = "\x00"
# The same for bytes, in one table: letters folded, NUL kept, every other byte a space.
_ASCII_BYTES = bytes(c if c == 0 or (c < 128 and chr(c).isalnum()) else 32
                     for c in range(256)).lower()
_SPACE = 32
_NORMALISE_CHUNK = 1 << 15  # texts normalised at once
_CODE_BITS = 63  # bits of a non-negative int64: several ids packed into one sort key
# How caption_clusters joins texts. A text lists keys when _KEY_PRICE keys cost no more than
# the candidates its query would examine; the others are asked. The leader cover is used
# instead when a sample of queries says it would examine fewer candidates: its query of one
# text of a tight set of look-alikes covers them all, keys cost the same whatever the set.
_KEY_PRICE = 2
_SAMPLE = 256
_SAMPLE_WORK = 1 << 19
_ASK_WORK = 1 << 21  # candidates examined by one batch of asked texts


def normalise_caption(text: str) -> str:
    """NFKC, case fold, punctuation to spaces, collapse whitespace."""
    if text.isascii():  # NFKC leaves ASCII unchanged
        return " ".join(text.lower().translate(_ASCII_NON_WORD).split())
    text = unicodedata.normalize("NFKC", text).casefold()
    return _NON_WORD.sub(" ", text).strip()


def normalise_captions(texts: Sequence[str]) -> list[str]:
    """:func:`normalise_caption` of every text, in order; the ASCII texts (without NUL) in one
    pass over their joined text instead of one call each, a chunk of texts at a time (a chunk
    fits the processor's cache, and no copy of every text is made at once)."""
    texts = list(texts)
    out: list[str] = []
    for at in range(0, len(texts), _NORMALISE_CHUNK):
        out += _normalised_chunk(texts[at:at + _NORMALISE_CHUNK])
    return out


def _normalised_chunk(texts: list[str]) -> list[str]:
    joined = _BATCH_SEP.join(texts)
    if joined.isascii() and joined.count(_BATCH_SEP) == len(texts) - 1:  # every text at once
        return _ascii_batch(joined)
    out = [""] * len(texts)
    batch = [k for k, t in enumerate(texts) if t.isascii() and _BATCH_SEP not in t]
    done = set(batch)
    for k, t in enumerate(texts):
        if k not in done:
            out[k] = normalise_caption(t)
    parts = _ascii_batch(_BATCH_SEP.join([texts[k] for k in batch])) if batch else []
    for k, part in zip(batch, parts):
        out[k] = part
    return out


def _ascii_batch(joined: str) -> list[str]:
    """The normalised texts of ``joined`` (ASCII texts separated by NUL), as bytes with numpy:
    one table look-up per byte folds case and turns what is not a letter or digit into a
    space; a space is kept only after a letter or digit and before another (a regular
    expression and a strip per text cost several times more)."""
    b = np.frombuffer(joined.encode("ascii").translate(_ASCII_BYTES), dtype=np.uint8)
    keep = b != _SPACE  # letters, digits, separators
    keep[1:] |= keep[:-1] & (b[:-1] != 0)  # and the first space after a letter or digit
    b = b[keep]
    space = b == _SPACE
    space[:-1] &= b[1:] == 0  # such a space before a separator, or at the end, is trailing
    return b[~space].tobytes().decode("ascii").split(_BATCH_SEP)


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


def _shingle_table(texts: list[str]) -> tuple[np.ndarray, np.ndarray]:
    """Distinct (text index, shingle id) entries sorted by text, then shingle frequency, then id.

    Shingles as in :func:`shingles`; the frequency order puts each text's rarest shingles first
    (any fixed global order keeps the prefix filter exact; rare-first keeps candidates few).
    Both columns are int32 (int64 from 2**31 texts or shingles on). Built a block at a time
    into arrays made once: at 100k clips the first touch of fresh memory costs as much as the
    arithmetic on it.
    """
    lengths = text_lengths(texts)
    n_sh = np.maximum(lengths - 2, 1)
    sid = _shingle_ids(texts, lengths, n_sh)
    df = np.bincount(sid)
    ids = np.int32 if max(len(texts), len(df)) < 2**31 else np.int64
    s_bits, d_bits = int(sid.max()).bit_length(), int(df.max()).bit_length()
    text_of = np.repeat(np.arange(len(texts), dtype=ids), n_sh)
    if (len(texts) - 1).bit_length() + d_bits + s_bits > _CODE_BITS:
        order = np.lexsort((sid, df[sid], text_of))
        text_of, sid = text_of[order], sid[order].astype(ids)
        keep = np.r_[True, (text_of[1:] != text_of[:-1]) | (sid[1:] != sid[:-1])]
        return text_of[keep], sid[keep]
    key = sid  # one int64 key (text, df, sid), made in place of the ids
    for at in range(0, len(key), BLOCK):
        s = key[at:at + BLOCK]
        s |= (text_of[at:at + BLOCK].astype(np.int64) << (d_bits + s_bits)) | (df[s] << s_bits)
    del text_of, sid
    key.sort()
    first = np.r_[True, key[1:] != key[:-1]]
    text, sid = np.empty(int(first.sum()), dtype=ids), np.empty(int(first.sum()), dtype=ids)
    done = 0
    for at in range(0, len(key), BLOCK):
        k = key[at:at + BLOCK][first[at:at + BLOCK]]
        text[done:done + len(k)] = k >> (d_bits + s_bits)
        sid[done:done + len(k)] = k & ((1 << s_bits) - 1)
        done += len(k)
    return text, sid


def _shingle_ids(texts: list[str], lengths: np.ndarray, n_sh: np.ndarray) -> np.ndarray:
    """Id of every shingle of the texts (``n_sh`` per text): the rank of its three word ids
    among the distinct triples. A shingle starts at every word but the last two of its text; a
    text shorter than three words has one shingle, at its first word, with a pad id for the
    words it lacks."""
    # word ids, then two pads, so that the two words after any word can be read as slices
    w, pad = word_ids(texts, pads=2)
    ends = np.cumsum(lengths)
    short = lengths < 3
    first_short = (ends - lengths)[short]
    starts_here = np.ones(len(w) - 2, dtype=bool)
    starts_here[ends - 1] = False
    starts_here[(ends - 2)[lengths >= 2]] = False
    starts_here[first_short] = True
    second = np.where(lengths[short] > 1, w[first_short + 1], pad).astype(np.int64)
    at_short = (np.cumsum(n_sh) - 1)[short]  # the one shingle of each short text
    bits = pad.bit_length()
    if 3 * bits > _CODE_BITS:  # three ids do not fit one code
        triple = np.stack([w[:-2][starts_here], w[1:-1][starts_here], w[2:][starts_here]], 1)
        triple[at_short, 1], triple[at_short, 2] = second, pad
        return np.unique(triple, axis=0, return_inverse=True)[1].ravel()
    # (w0, w1, w2) as bits of one code: codes sort as the triples do
    code = np.empty(int(n_sh.sum()), dtype=np.int64)
    done = 0
    for at in range(0, len(w) - 2, BLOCK):
        c = w[at:at + BLOCK + 2].astype(np.int64)
        c = (c[:-2] << (2 * bits)) | (c[1:-1] << bits) | c[2:]
        c = c[starts_here[at:at + BLOCK]]
        code[done:done + len(c)] = c
        done += len(c)
    code[at_short] = (w[first_short].astype(np.int64) << (2 * bits)) | (second << bits) | pad
    del w, starts_here
    return dense_ids(code, out=code)


def _runs(starts: np.ndarray, lengths: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """For runs ``[starts[k], starts[k] + lengths[k])``: (run number, position) of every element."""
    run = np.repeat(np.arange(len(starts)), lengths)
    within = np.arange(lengths.sum()) - np.repeat(np.cumsum(lengths) - lengths, lengths)
    return run, np.repeat(starts, lengths) + within


def _overlaps(a: np.ndarray, b: np.ndarray, first: np.ndarray, size: np.ndarray,
              sid: np.ndarray) -> np.ndarray:
    """|set(a_k) ∩ set(b_k)| for every pair k, from the sorted (text, shingle) table."""
    ra, pa = _runs(first[a], size[a])
    rb, pb = _runs(first[b], size[b])
    n_sid = int(sid.max()) + 1
    key = np.sort(np.concatenate([ra * n_sid + sid[pa], rb * n_sid + sid[pb]]))
    dup = key[1:] == key[:-1]  # a shingle of pair k seen twice: once in a_k, once in b_k
    return np.bincount(key[1:][dup] // n_sid, minlength=len(a))


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
    text, sid = (c.astype(np.int64) for c in _shingle_table(texts))  # products of ids below
    size = np.bincount(text, minlength=len(texts))
    first = np.cumsum(size) - size
    rank = np.arange(len(text)) - first[text]
    prefix_len = size - np.ceil(threshold * size - 1e-9).astype(np.int64) + 1
    keep = rank < prefix_len[text]
    p_text, p_sid = text[keep], sid[keep]
    by = np.sort(p_sid * len(texts) + p_text)
    p_text, p_sid = by % len(texts), by // len(texts)
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
    cand = distinct_sorted(np.minimum(a, b) * len(texts) + np.maximum(a, b))
    a, b = cand // len(texts), cand % len(texts)
    small, big = np.minimum(size[a], size[b]), np.maximum(size[a], size[b])
    ok = small + 1e-9 >= threshold * big  # size filter: J <= |small| / |big|
    if keys is not None:
        k = np.asarray(keys, dtype=np.int64)
        ok &= (k[a] != k[b]) | (k[a] < 0)
    a, b = a[ok], b[ok]
    inter = _overlaps(a, b, first, size, sid)
    sim = inter / (size[a] + size[b] - inter)
    hit = sim + 1e-12 >= threshold
    return list(zip(a[hit].tolist(), b[hit].tolist(), sim[hit].tolist()))


class PrefixIndex:
    """The prefix-filtered shingle index of :func:`similar_pairs`, asked one batch at a time.

    ``neighbours(q)`` returns every text with Jaccard >= ``threshold`` to each query: the
    candidates are the texts whose prefix shares a shingle with the query's prefix (exact by
    the prefix filter), pruned by size and verified on the full shingle sets.
    """

    def __init__(self, texts: Sequence[str], threshold: float, *,
                 table: tuple[np.ndarray, np.ndarray] | None = None):
        if not 0.0 < threshold <= 1.0:
            raise ValueError(f"caption threshold must lie in (0, 1], got {threshold!r}")
        self.n = len(texts)
        self.threshold = threshold
        text, self.sid = _shingle_table(list(texts)) if table is None else table
        self.size = np.bincount(text, minlength=self.n)
        self.first = np.cumsum(self.size) - self.size
        del text
        self.prefix = self.size - np.ceil(threshold * self.size - 1e-9).astype(np.int64) + 1
        # the prefix entries, read as runs: no array as long as the table is made
        p_text, at = _runs(self.first, np.minimum(self.prefix, self.size))
        p_sid, p_rank = self.sid[at], at - self.first[p_text]
        by = np.lexsort((p_text, p_sid))  # postings: by shingle, then text
        self.post_text, self.post_rank = p_text[by], p_rank[by]
        n_sid = int(self.sid.max()) + 1
        self.post_count = np.bincount(p_sid, minlength=n_sid)
        self.post_start = np.cumsum(self.post_count) - self.post_count
        #: candidates a query of each text examines (before the positional filter)
        self.cost = np.bincount(p_text, weights=self.post_count[p_sid],
                                minlength=self.n).astype(np.int64)

    def similarity(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """Exact shingle Jaccard of the pairs ``(a[k], b[k])``."""
        if not len(a):
            return np.empty(0)
        inter = _overlaps(a, b, self.first, self.size, self.sid)
        return inter / (self.size[a] + self.size[b] - inter)

    def neighbours(self, q: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, int]:
        """``(query, other, 1 - jaccard, work)`` for every text near a query (see class)."""
        q = np.asarray(q, dtype=np.int64)
        qq, pos = _runs(self.first[q], self.prefix[q])
        s = self.sid[pos]
        c = self.post_count[s]
        owner, at = _runs(self.post_start[s], c)
        a, b = q[qq][owner], self.post_text[at]
        work = len(a)
        # positional filter: a shingle at rank i of a and j of b leaves room for at most
        # 1 + min(|a| - i - 1, |b| - j - 1) shared shingles from there on; a pair is kept when
        # some shared prefix shingle allows the overlap J >= t needs, t (|a| + |b|) / (1 + t)
        # (exact: the first shared shingle lies in both prefixes and bounds the overlap)
        i = (pos - self.first[q[qq]])[owner]
        room = 1 + np.minimum(self.size[a] - i - 1, self.size[b] - self.post_rank[at] - 1)
        need = np.ceil(self.threshold * (self.size[a] + self.size[b]) / (1 + self.threshold)
                       - 1e-9)
        ok = (a != b) & (room >= need)
        pair = distinct_sorted(a[ok] * self.n + b[ok])
        a, b = pair // self.n, pair % self.n
        sim = self.similarity(a, b)
        hit = sim + 1e-12 >= self.threshold
        return a[hit], b[hit], 1.0 - sim[hit], work


def caption_clusters(texts: Sequence[str], threshold: float, *, seed: int = 0,
                     method: str = "auto") -> Clusters:
    """Clusters of near-identical texts: connected components of "shingle Jaccard >= threshold".

    ``texts`` normalised and distinct, as for :func:`similar_pairs`. Exact (the same components
    as joining every pair :func:`similar_pairs` finds) without listing the pairs, by one of
    two methods:

    - ``"keys"``: texts are joined through keys of the shingles they share
      (:mod:`clipscribe.export.corekeys`); a text whose keys would cost more than asking the
      prefix-filtered index for its near texts is asked instead. Costs the same however many
      texts look alike. The links are checked on the full shingle sets; a failed check (two
      subsets whose keys collide) hands the job to the leader cover.
    - ``"cover"``: the leader cover of :mod:`clipscribe.export.clusters` over the index, cheap
      when look-alikes form tight sets (one query covers a set).

    ``"auto"`` estimates both from the index and a sample of queries and takes the cheaper.
    Link distances are ``1 - J``; ``queries`` counts the texts asked, ``work`` the keys listed
    (``"keys"``) or the candidates examined (``"cover"``).
    """
    if method not in ("auto", "keys", "cover"):
        raise ValueError(f"method must be 'auto', 'keys' or 'cover', got {method!r}")
    texts = list(texts)
    if len(texts) < 2:
        return Clusters(np.arange(len(texts)), *(np.empty(0, dtype=np.int64),) * 2, np.empty(0))
    index = PrefixIndex(texts, threshold, table=_shingle_table(texts))
    keys = _KEY_PRICE * key_counts(index.size, threshold)
    if method == "cover" or (method == "auto" and _cover_estimate(index, seed)
                             <= np.minimum(keys, index.cost).sum()):
        return _cover_clusters(texts, threshold, index, seed)
    joined = core_join(index.first, index.size, index.sid, threshold, seed=seed,
                       listed=keys <= index.cost if method == "auto" else None)
    parent, links = joined.parent, [(joined.link_a, joined.link_b, np.zeros(len(joined.link_a)))]
    # batches of asked texts examining about _ASK_WORK candidates each
    spent = np.cumsum(index.cost[joined.long])
    steps = np.arange(1, int(spent[-1]) // _ASK_WORK + 1) * _ASK_WORK if len(spent) else []
    bounds = np.unique(np.r_[0, np.searchsorted(spent, steps, "right"), len(joined.long)])
    for lo, hi in zip(bounds[:-1].tolist(), bounds[1:].tolist()):
        qi, other, d, _ = index.neighbours(joined.long[lo:hi])
        parent = union(parent, qi, other, d, links)
    la, lb = (np.concatenate(x) for x in list(zip(*links))[:2])
    sim = index.similarity(la, lb)
    if not np.all(sim + 1e-12 >= threshold):
        return _cover_clusters(texts, threshold, index, seed)
    return Clusters(parent, la, lb, 1.0 - sim, len(joined.long), joined.keys)


def _cover_estimate(index: PrefixIndex, seed: int) -> float:
    """Candidates the leader cover would examine, from a sample of queries: a text with k near
    texts is asked about once in k + 1 (exact when near texts form disjoint tight sets)."""
    order = np.random.default_rng(seed).permutation(index.n)[:_SAMPLE]
    # at least _SAMPLE // 16 texts, then as many as examine at most _SAMPLE_WORK candidates
    take = max(_SAMPLE // 16, int(np.searchsorted(np.cumsum(index.cost[order]), _SAMPLE_WORK)))
    sample = np.sort(order[:take])
    qi, _, _, _ = index.neighbours(sample)
    near = np.bincount(qi, minlength=index.n)[sample]
    return float(np.mean(index.cost[sample] / (near + 1))) * index.n


def _cover_clusters(texts: list[str], threshold: float, index: PrefixIndex,
                    seed: int) -> Clusters:
    """The leader cover of :mod:`clipscribe.export.clusters` over the prefix index. Jaccard
    distance ``1 - J`` is a metric, so leaders of two stars that could hold a near pair have
    ``J >= 1 - 3 (1 - threshold)``."""
    wide = 1.0 - 3.0 * (1.0 - threshold) - 1e-9

    def wide_pairs(items: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        if wide <= 0.0:  # every pair may be within three times the distance
            i, j = np.triu_indices(len(items), 1)
        else:
            found = similar_pairs([texts[k] for k in items.tolist()], wide)
            i = np.array([p[0] for p in found], dtype=np.int64)
            j = np.array([p[1] for p in found], dtype=np.int64)
        return items[i], items[j]

    def close(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        sim = index.similarity(a, b)
        return sim + 1e-12 >= threshold, 1.0 - sim

    return cover_components(len(texts), index.neighbours, wide_pairs, close,
                            radius=1.0 - threshold, seed=seed)
