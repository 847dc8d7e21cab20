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
exact without comparing all pairs. Hand-written because the libraries that do this (MinHash
LSH) are approximate and not among the project's dependencies.
"""

from __future__ import annotations

import math
import re
import unicodedata
from collections import Counter
from typing import Iterable

_NON_WORD = re.compile(r"[^\w\s]|_")
_SPACES = re.compile(r"\s+")


def normalise_caption(text: str) -> str:
    """NFKC, case fold, punctuation to spaces, collapse whitespace."""
    text = unicodedata.normalize("NFKC", text).casefold()
    return _SPACES.sub(" ", _NON_WORD.sub(" ", text)).strip()


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


def similar_pairs(texts: Iterable[str], threshold: float) -> list[tuple[int, int, float]]:
    """Pairs ``(i, j, jaccard)``, ``i < j``, of distinct texts whose shingle Jaccard >= threshold.

    ``texts`` should already be normalised and distinct. Exact (see module docstring).
    """
    if not 0.0 < threshold <= 1.0:
        raise ValueError(f"caption threshold must lie in (0, 1], got {threshold!r}")
    sets = [shingles(t) for t in texts]
    df = Counter(s for st in sets for s in st)
    ordered = [sorted(st, key=lambda s: (df[s], s)) for st in sets]
    # Visit short sets first: then every earlier candidate y has |y| <= |x| and the size filter
    # |y| >= t|x| drops the rest without a set intersection.
    visit = sorted(range(len(sets)), key=lambda i: (len(sets[i]), i))
    index: dict[str, list[int]] = {}
    out = []
    for i in visit:
        size = len(sets[i])
        prefix = ordered[i][:size - math.ceil(threshold * size - 1e-9) + 1]
        seen: set[int] = set()
        for s in prefix:
            for j in index.get(s, ()):
                if j in seen:
                    continue
                seen.add(j)
                if len(sets[j]) + 1e-9 < threshold * size:
                    continue
                sim = jaccard(sets[i], sets[j])
                if sim + 1e-12 >= threshold:
                    out.append((min(i, j), max(i, j), sim))
        for s in prefix:
            index.setdefault(s, []).append(i)
    out.sort()
    return out
