r"""ROUGE-L: longest-common-subsequence F-measure between a caption and its references (Lin 2004).

Tokens: the text is lower-cased, every run of characters other than ``a-z`` and ``0-9``
becomes a space, and the words are what remains (so "Pick-up" gives ``pick``, ``up``); no
stemming. With several references the one with the highest F-measure counts. Scores are on
a 0-1 scale.

The longest common subsequences of many (hypothesis, reference) pairs are computed together:
the dynamic programme runs cell by cell with numpy over all pairs of similar length at once.

Lin, C.-Y. (2004). ROUGE: a package for automatic evaluation of summaries. Text Summarization
Branches Out (ACL workshop), 74-81. https://aclanthology.org/W04-1013
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Sequence

import numpy as np

from . import _checks
from ._recipe import Recipe

LIN_2004 = ("Lin, C.-Y. (2004). ROUGE: a package for automatic evaluation of summaries. "
            "Text Summarization Branches Out, 74-81. aclanthology.org/W04-1013")
_NON_ALNUM = re.compile(r"[^a-z0-9]+")


@lru_cache(maxsize=1 << 16)
def tokenize_rouge(text: str) -> tuple[str, ...]:
    """Lower-case words of ``a-z0-9`` characters; everything else separates words.

    Examples
    --------
    >>> tokenize_rouge("A man (waves) at 3.5 m!")
    ('a', 'man', 'waves', 'at', '3', '5', 'm')
    """
    return tuple(_NON_ALNUM.sub(" ", text.lower()).split())


@dataclass(frozen=True)
class RougeScore:
    """ROUGE-L of one caption: F-measure, precision and recall (0-1) of the best reference."""

    fmeasure: float
    precision: float
    recall: float
    recipe: Recipe = field(compare=False)

    def __float__(self) -> float:
        return float(self.fmeasure)

    def to_dict(self) -> dict:
        return {"fmeasure": self.fmeasure, "precision": self.precision, "recall": self.recall,
                "recipe": self.recipe.to_dict()}


def lcs_lengths(hyps: Sequence[Sequence[int]], refs: Sequence[Sequence[int]]) -> np.ndarray:
    """Length of the longest common subsequence of each pair of integer sequences.

    Pairs are grouped by (hypothesis length, reference length) rounded up to a power of two,
    and each group runs one vectorised dynamic programme (padding never matches).
    """
    n = len(hyps)
    out = np.zeros(n, dtype=np.int64)
    if n == 0:
        return out
    hl = np.fromiter((len(h) for h in hyps), dtype=np.int64, count=n)
    rl = np.fromiter((len(r) for r in refs), dtype=np.int64, count=n)

    def bucket(x):
        return np.where(x <= 1, x, 1 << np.ceil(np.log2(np.maximum(x, 1))).astype(np.int64))

    key = bucket(hl) * (1 << 32) + bucket(rl)
    for k in np.unique(key[(hl > 0) & (rl > 0)]):
        idx = np.flatnonzero(key == k)
        wh, wr = int(hl[idx].max()), int(rl[idx].max())
        h = np.full((len(idx), wh), -1, dtype=np.int64)
        r = np.full((len(idx), wr), -2, dtype=np.int64)
        for row, i in enumerate(idx.tolist()):
            h[row, :hl[i]] = hyps[i]
            r[row, :rl[i]] = refs[i]
        prev = np.zeros((len(idx), wr + 1), dtype=np.int64)
        for a in range(wh):
            cur = np.zeros_like(prev)
            eq = h[:, a:a + 1] == r
            diag = prev[:, :-1] + 1
            for b in range(wr):
                cur[:, b + 1] = np.where(eq[:, b], diag[:, b],
                                         np.maximum(prev[:, b + 1], cur[:, b]))
            prev = cur
        out[idx] = prev[:, -1]
    return out


def f_from_lcs(lcs, hyp_len, ref_len) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(F, P, R) arrays; 0 where either side has no token."""
    lcs = np.asarray(lcs, dtype=np.float64)
    hl = np.asarray(hyp_len, dtype=np.float64)
    rl = np.asarray(ref_len, dtype=np.float64)
    ok = (hl > 0) & (rl > 0)
    p = np.where(ok, lcs / np.where(hl > 0, hl, 1.0), 0.0)
    r = np.where(ok, lcs / np.where(rl > 0, rl, 1.0), 0.0)
    s = p + r
    f = np.where(s > 0, 2.0 * p * r / np.where(s > 0, s, 1.0), 0.0)
    return f, p, r


class Vocabulary(dict):
    """Word -> integer id, growing as texts are encoded."""

    def ids(self, tokens: Sequence[str]) -> list[int]:
        return [self.setdefault(t, len(self)) for t in tokens]


def rouge_l(hypothesis: str, references: Sequence[str]) -> RougeScore:
    r"""ROUGE-L F-measure of one caption against one or more references.

    Parameters
    ----------
    hypothesis : str
    references : sequence of str
        ``None`` entries are ignored; at least one reference is needed.

    Returns
    -------
    RougeScore
        ``.fmeasure``, ``.precision``, ``.recall`` (0-1) of the reference with the highest
        F-measure (the first one on ties), and ``.recipe``. An empty hypothesis or reference
        (no word) scores 0.

    Notes
    -----
    With :math:`L` the length of the longest common subsequence of hypothesis :math:`h` and
    reference :math:`r` (in words),

    .. math:: P = L/|h|, \quad R = L/|r|, \quad F = \frac{2PR}{P + R}

    (the balanced F-measure, :math:`\beta = 1`). Lin, C.-Y. (2004), ROUGE: a package for
    automatic evaluation of summaries, section 3.1. https://aclanthology.org/W04-1013

    Examples
    --------
    >>> round(rouge_l("a man picks up a box", ["a man lifts a box"]).fmeasure, 4)
    0.7273
    """
    hyps, refs = _checks.hypotheses_references([hypothesis], [references])
    if not refs[0]:
        raise ValueError("no references: ROUGE-L is undefined")
    vocab = Vocabulary()
    h = vocab.ids(tokenize_rouge(hyps[0]))
    rs = [vocab.ids(tokenize_rouge(r)) for r in refs[0]]
    lcs = lcs_lengths([h] * len(rs), rs)
    f, p, r = f_from_lcs(lcs, len(h), [len(x) for x in rs])
    best = int(np.argmax(f))
    recipe = Recipe.make("rouge", "L", tok="alnum-lower", stem="none", beta=1,
                         refs=len(rs), n_items=1)
    return RougeScore(float(f[best]), float(p[best]), float(r[best]), recipe)
