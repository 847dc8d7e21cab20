"""Integer ids for the shingle table of :mod:`clipscribe.export.textdup`, built fast and with
little memory.

Every function returns exactly what its plain version returns (a dict over one split of the
joined texts; ``np.argsort`` of the values), so the shingle ids and everything derived from them
(prefix order, key values, the links a report shows) stay the same; they only avoid the plain
versions' cost at scale: one str object and one dict look-up per word (12.8M words at 100k
clips: two seconds of pure Python, and most of the peak memory of a caption check), and an
argsort where a plain sort and a search do.
"""

from __future__ import annotations

import itertools

import numpy as np

#: texts whose words are numbered at once (bounds the arrays alive at one time)
_WORD_CHUNK = 1 << 15
#: odd 64-bit multipliers that mix a word's bytes and length into one hash
_MIX = (0x9E3779B97F4A7C15, 0xC2B2AE3D27D4EB4F, 0x165667B19E3779F9)
#: _LOW[k] keeps the low k bytes of a uint64 (k = 0..8)
_LOW = np.array([(1 << (8 * k)) - 1 for k in range(8)] + [2**64 - 1], dtype=np.uint64)
_SHORT = 16  # bytes of a word held in place; a longer word is numbered through a dict
_SPACE = 32
#: values handled at once by the blockwise steps (8 MB of int64: a processor cache's size)
BLOCK = 1 << 20


def word_ids(texts: list[str], pads: int = 0) -> tuple[np.ndarray, int]:
    """Id of every word of the texts (split at single spaces), in text order, numbered by first
    appearance, then ``pads`` times the id after the last (room the caller would otherwise
    copy the ids to get), as int32 (int64 beyond 2**31 distinct words); and the number of
    distinct words.

    The same ids as splitting ``" ".join(texts)`` and numbering the words with a dict
    (:func:`word_ids_plain`), found with numpy a chunk of texts at a time: each word is its
    UTF-8 bytes packed into two integers and its length (exact for words of up to 16 bytes;
    a longer word is numbered through a dict), hashed to one integer; words are matched by
    hash, and every match is checked on the packed bytes, so a hash collision, however
    unlikely, hands the job to the plain version instead of merging two words.
    """
    vocab = _Vocab()
    long_words: dict[bytes, int] = {}
    parts = []
    for at in range(0, len(texts), _WORD_CHUNK):
        ids = vocab.number(*_packed_words(texts[at:at + _WORD_CHUNK], long_words))
        if ids is None:
            return word_ids_plain(texts, pads)
        parts.append(ids)
    return _joined(parts, pads, vocab.size), vocab.size


def word_ids_plain(texts: list[str], pads: int = 0) -> tuple[np.ndarray, int]:
    """:func:`word_ids` with a dict over the words of each chunk of texts."""
    vocab: dict[str, int] = {}
    parts = []
    for at in range(0, len(texts), _WORD_CHUNK):
        words = " ".join(texts[at:at + _WORD_CHUNK]).split(" ")
        for w in dict.fromkeys(words):  # first appearance order within the chunk
            if w not in vocab:
                vocab[w] = len(vocab)
        parts.append(np.fromiter(map(vocab.__getitem__, words), dtype=np.int64,
                                 count=len(words)))
    return _joined(parts, pads, len(vocab)), len(vocab)


def _joined(parts: list[np.ndarray], pads: int, size: int) -> np.ndarray:
    """The ids of every chunk and the pads in one array, int32 when every id fits (half the
    memory of the largest array of a caption check)."""
    dtype = np.int32 if size < 2**31 else np.int64
    return np.concatenate(parts + [np.full(pads, size, dtype=dtype)], dtype=dtype)


def _packed_words(texts: list[str], long_words: dict[bytes, int]
                  ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``(lo, hi, length)`` of every word of the texts, which tell words apart exactly: a word of
    at most 16 UTF-8 bytes is its bytes (zero-padded, little-endian) and its byte length; a
    longer one is its number in ``long_words`` (kept across chunks), 0 and length 17."""
    data = " ".join(texts).encode("utf-8", "surrogatepass")  # one-to-one, space is byte 32
    buf = np.zeros(len(data) + 2 * 8, dtype=np.uint8)
    buf[:len(data)] = np.frombuffer(data, dtype=np.uint8)
    space = np.flatnonzero(buf[:len(data)] == _SPACE)
    start = np.r_[0, space + 1]
    length = np.r_[space, len(data)] - start
    del space
    # the 8 bytes from every offset, read in place
    at = np.ndarray((len(data) + 9,), dtype="<u8", buffer=buf, strides=(1,))
    lo = at[start] & _LOW[np.minimum(length, 8)]
    hi = at[start + 8] & _LOW[np.clip(length - 8, 0, 8)]
    for k in np.flatnonzero(length > _SHORT).tolist():
        s = int(start[k])
        lo[k] = long_words.setdefault(data[s:s + int(length[k])], len(long_words))
        hi[k] = 0
        length[k] = _SHORT + 1
    return lo, hi, length


class _Vocab:
    """The words seen so far: their hashes (sorted), ids and packed bytes."""

    def __init__(self) -> None:
        self.hash = np.empty(0, dtype=np.uint64)
        self.id = np.empty(0, dtype=np.int64)
        self.word = np.empty((0, 3), dtype=np.uint64)

    @property
    def size(self) -> int:
        return len(self.word)

    def number(self, lo: np.ndarray, hi: np.ndarray, length: np.ndarray) -> np.ndarray | None:
        """Ids of these words (new words numbered by first appearance after the known ones);
        None when two different words share a hash."""
        h = lo * np.uint64(_MIX[0])
        h ^= hi * np.uint64(_MIX[1])
        h += length.astype(np.uint64) * np.uint64(_MIX[2])
        distinct = np.sort(h)
        distinct = distinct[np.r_[True, distinct[1:] != distinct[:-1]]]
        inv = np.searchsorted(distinct, h)
        first = np.full(len(distinct), len(h), dtype=np.int64)
        np.minimum.at(first, inv, np.arange(len(h)))
        rep = first[inv]
        if not (np.array_equal(lo[rep], lo) and np.array_equal(hi[rep], hi)
                and np.array_equal(length[rep], length)):
            return None
        word = np.stack([lo[first], hi[first], length[first].astype(np.uint64)], axis=1)
        at = np.minimum(np.searchsorted(self.hash, distinct), max(len(self.hash) - 1, 0))
        known = self.hash[at] == distinct if len(self.hash) else np.zeros(len(distinct), bool)
        if not np.array_equal(self.word[self.id[at[known]]], word[known]):
            return None
        ids = np.empty(len(distinct), dtype=np.int64)
        ids[known] = self.id[at[known]]
        new = np.flatnonzero(~known)
        new = new[np.argsort(first[new], kind="stable")]
        ids[new] = np.arange(self.size, self.size + len(new))
        self.word = np.concatenate([self.word, word[new]])
        order = np.argsort(np.r_[self.hash, distinct[new]], kind="stable")
        self.hash = np.r_[self.hash, distinct[new]][order]
        self.id = np.r_[self.id, ids[new]][order]
        return ids[inv]


def dense_ids(values: np.ndarray, *, out: np.ndarray | None = None) -> np.ndarray:
    """Rank of each value among the distinct values (int64): what
    ``np.unique(values, return_inverse=True)[1]`` gives; written to ``out`` when given (which
    may be ``values`` itself, when int64: the ranks then take no memory of their own).

    A block of values at a time: each block sorted on its own (a plain sort: ``np.sort`` of
    integers is vectorised, ``np.argsort`` much less so) gives its distinct values, whose
    union the blocks are then searched in. Blocks that fit the processor's cache make this
    several times faster than sorting every value at once, and no array as large as
    ``values`` is made but the ranks.
    """
    distinct = [distinct_sorted(values[at:at + BLOCK]) for at in range(0, len(values), BLOCK)]
    every = distinct_sorted(np.concatenate(distinct)) if distinct else values[:0]
    del distinct
    out = np.empty(len(values), dtype=np.int64) if out is None else out
    for at in range(0, len(values), BLOCK):
        out[at:at + BLOCK] = np.searchsorted(every, values[at:at + BLOCK])
    return out


def distinct_sorted(values: np.ndarray) -> np.ndarray:
    """The distinct values, sorted."""
    sv = np.sort(values)
    return sv[np.r_[True, sv[1:] != sv[:-1]]] if len(sv) else sv


def text_lengths(texts: list[str]) -> np.ndarray:
    """Words per text (single spaces between words)."""
    return np.fromiter(map(str.count, texts, itertools.repeat(" ")), dtype=np.int64,
                       count=len(texts)) + 1
