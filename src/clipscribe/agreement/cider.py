"""CIDEr-D: consensus of each caption with the other captions of its clip (TF-IDF n-grams)."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np

from . import _checks
from ._recipe import Recipe
from .captions import NgramIndex, corpus_index, tokenizer
from .loo import Columns, _flatten


@dataclass(frozen=True)
class CiderResult:
    """Per caption CIDEr-D (NaN without another annotator on the clip) and its means."""

    overall: float
    per_annotator: dict[str, float]
    per_clip: dict[Any, float]
    captions: Sequence[tuple[Any, str, float]]
    recipe: Recipe = field(compare=False)

    def to_dict(self) -> dict:
        f = (lambda v: None if math.isnan(v) else v)
        return {"overall": f(self.overall),
                "per_annotator": {k: f(v) for k, v in self.per_annotator.items()},
                "recipe": self.recipe.to_dict()}


class CaptionValues(Columns):
    """(clip, annotator, value) of every caption, kept as three columns; a row comes out as a
    tuple when asked for (cheap to build, store and read back for a million captions)."""

    __slots__ = ("clips", "authors", "values")
    _packed = ("clips", "authors")

    def __init__(self, clips: list, authors: list[str], values: np.ndarray) -> None:
        self.clips, self.authors, self.values = clips, authors, values

    def _row(self, i: int) -> tuple:
        return (self.clips[i], self.authors[i], float(self.values[i]))

    def __iter__(self):
        return zip(self.clips, self.authors, self.values.tolist())


def cider_d(captions_by_clip: Mapping[Any, Sequence[Any]], *, max_order: int = 4,
            sigma: float = 6.0, scale: float = 10.0, tokenize: str = "13a") -> CiderResult:
    r"""CIDEr-D of every caption against the other annotators' captions of the same clip.

    Parameters
    ----------
    captions_by_clip : mapping clip -> sequence of (annotator, text) or of str
    max_order : highest n-gram order (4).
    sigma : width of the Gaussian length penalty (6).
    scale : factor the mean similarity is multiplied by (10).
    tokenize : "13a" (default) or "none".

    Notes
    -----
    With :math:`g^n(s)` the TF-IDF vector of the n-grams of s, term frequency the raw count and
    :math:`\mathrm{idf}(w) = \log N - \log \max(1, \mathrm{df}(w))` (N clips; df = clips whose
    captions contain w: the reference corpus is all captions of all clips, our choice for a
    consensus view), for caption c with references :math:`R` and token lengths :math:`l`:

    .. math:: \mathrm{CIDEr\text{-}D}(c, R) = \frac{10}{|R|} \sum_{r \in R} \frac1N \sum_{n=1}^N
              e^{-\frac{(l_c - l_r)^2}{2\sigma^2}}
              \frac{\sum_w \min(g^n_w(c), g^n_w(r))\, g^n_w(r)}{\|g^n(c)\|\,\|g^n(r)\|}

    The clipping ``min`` and the length penalty make the "-D" variant. Range 0..10 (10 when c
    and all references are equal and at least N tokens long: an order with no n-gram adds 0). With one clip every idf is 0 and so is every score.

    Vedantam, R., Zitnick, C.L. & Parikh, D. (2015). CIDEr: Consensus-based image description
    evaluation. CVPR 2015, 4566-4575. https://doi.org/10.1109/CVPR.2015.7299087
    """
    max_order = _checks.positive_int("max_order", max_order)
    sigma = _checks.finite_number("sigma", sigma, minimum=1e-9)
    scale = _checks.finite_number("scale", scale)
    tokenizer(tokenize)  # checks the name
    clip, authors, texts, clip_keys = _flatten(captions_by_clip)
    index = corpus_index(tuple(texts), tokenize, max_order)
    names = {a: i for i, a in enumerate(sorted(set(authors)))}
    author = np.fromiter((names[a] for a in authors), dtype=np.int64, count=len(authors))
    scores = _scores(index, clip, author, len(clip_keys), max_order, sigma, scale)
    by_ann: dict[str, list[float]] = {}
    by_clip: dict[Any, list[float]] = {}
    for i, s in enumerate(scores):
        if not np.isnan(s):
            by_ann.setdefault(authors[i], []).append(s)
            by_clip.setdefault(clip_keys[clip[i]], []).append(s)
    ok = ~np.isnan(scores)
    recipe = Recipe.make("cider", "D", order=max_order, sigma=sigma, scale=scale, tok=tokenize,
                         df="all clips", n_items=int(ok.sum()), n_raters=len(set(authors)),
                         annotators=sorted(set(authors)))
    return CiderResult(float(scores[ok].mean()) if ok.any() else float("nan"),
                       {a: float(np.mean(v)) for a, v in sorted(by_ann.items())},
                       {c: float(np.mean(v)) for c, v in by_clip.items()},
                       CaptionValues([clip_keys[c] for c in clip.tolist()], list(authors),
                                     np.asarray(scores, dtype=float)), recipe)


def _scores(index: NgramIndex, clip: np.ndarray, author: np.ndarray, n_clips: int,
            max_order: int, sigma: float, scale: float) -> np.ndarray:
    """Per caption CIDEr-D (NaN without a reference), from the n-gram index.

    Vectorised with numpy rather than dictionaries per caption: for each order, the TF-IDF
    entries of captions of one clip that share an n-gram are paired by a sort on
    (clip, n-gram), so the work grows with the captions per clip squared, never with the
    number of clips squared."""
    n_docs = len(clip)
    log_n = math.log(max(n_clips, 1))
    # references of each caption: the captions of its clip by another annotator
    _, which, own = np.unique(clip * (author.max(initial=0) + 1) + author, return_inverse=True,
                              return_counts=True)
    refs = np.bincount(clip, minlength=n_clips)[clip] - own[which]
    length = index.lengths
    total = np.zeros(n_docs)
    for order in index.orders:
        if not len(order.doc):
            continue
        # entries of one clip sharing an n-gram, side by side: sort by (clip, n-gram)
        group = clip[order.doc] * order.n_keys + order.key
        sort = np.argsort(group, kind="stable")
        g, doc = group[sort], order.doc[sort]
        starts = np.flatnonzero(np.r_[True, g[1:] != g[:-1]])
        sizes = np.diff(np.r_[starts, len(g)])
        # document frequency: the clips whose captions hold the n-gram (one group each)
        df = np.bincount(g[starts] % order.n_keys, minlength=order.n_keys)
        idf = log_n - np.log(np.maximum(df, 1.0))
        value = order.count[sort] * idf[g % order.n_keys]
        norm = np.sqrt(np.bincount(doc, weights=value * value, minlength=n_docs))
        # every ordered pair of entries within a group, a run of whole clips at a time (a
        # caption's pairs all lie in its clip's run, so its sum is the same as in one pass)
        group_clip = g[starts] // order.n_keys
        for lo, hi in _runs(group_clip, sizes * sizes, PAIRS_PER_RUN):
            st, sz = starts[lo:hi], sizes[lo:hi]
            size_of = np.repeat(sz, sz)
            left = np.repeat(np.arange(st[0], st[-1] + sz[-1]), size_of)
            offset = np.arange(len(left)) - np.repeat(np.cumsum(size_of) - size_of, size_of)
            right = np.repeat(np.repeat(st, sz), size_of) + offset
            a, b = doc[left], doc[right]
            keep = (author[a] != author[b]) & (norm[a] > 0) & (norm[b] > 0)
            a, b, left, right = a[keep], b[keep], left[keep], right[keep]
            penalty = np.exp(-((length[a] - length[b]) ** 2) / (2.0 * sigma * sigma))
            term = np.minimum(value[left], value[right]) * value[right] / (norm[a] * norm[b])
            total += np.bincount(a, weights=penalty * term / max_order, minlength=n_docs)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(refs > 0, scale * total / np.maximum(refs, 1), np.nan)


# pairs expanded at once: ~8 arrays of this many 8-byte entries (about 0.2 GB) live together
PAIRS_PER_RUN = 4_000_000


def _runs(group_clip: np.ndarray, pairs: np.ndarray, limit: int):
    """``(lo, hi)`` ranges of groups (sorted by clip) that cover whole clips, each holding at
    most ``limit`` pairs, or one clip when that alone holds more."""
    bounds = np.r_[np.flatnonzero(np.r_[True, group_clip[1:] != group_clip[:-1]]),
                   len(group_clip)] if len(group_clip) else np.zeros(1, np.int64)
    before = np.r_[0, np.cumsum(pairs)][bounds]  # pairs in the groups before each bound
    cur, last = 0, len(bounds) - 1
    while cur < last:
        nxt = int(np.searchsorted(before, before[cur] + limit, side="right")) - 1
        nxt = min(max(nxt, cur + 1), last)
        yield int(bounds[cur]), int(bounds[nxt])
        cur = nxt
