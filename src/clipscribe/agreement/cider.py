"""CIDEr-D: consensus of each caption with the other captions of its clip (TF-IDF n-grams)."""

from __future__ import annotations

import math
from collections import Counter
from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

import numpy as np

from . import _checks
from ._recipe import Recipe
from .captions import ngram_counts, tokenizer
from .loo import _flatten


@dataclass(frozen=True)
class CiderResult:
    """Per caption CIDEr-D (NaN without another annotator on the clip) and its means."""

    overall: float
    per_annotator: dict[str, float]
    per_clip: dict[Any, float]
    captions: list[tuple[Any, str, float]]
    recipe: Recipe = field(compare=False)

    def to_dict(self) -> dict:
        f = (lambda v: None if math.isnan(v) else v)
        return {"overall": f(self.overall),
                "per_annotator": {k: f(v) for k, v in self.per_annotator.items()},
                "recipe": self.recipe.to_dict()}


def _vectors(counts: Counter, idf: Mapping, max_order: int):
    vec = [dict() for _ in range(max_order)]
    for g, c in counts.items():
        vec[len(g) - 1][g] = c * idf[g]
    norms = [math.sqrt(sum(v * v for v in d.values())) for d in vec]
    return vec, norms


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
    tok = tokenizer(tokenize)
    clip, authors, texts, clip_keys = _flatten(captions_by_clip)
    tokens = [tok(t) for t in texts]
    counts = [ngram_counts(t, max_order) for t in tokens]
    df: Counter = Counter()
    members: dict[int, list[int]] = {}
    for i, c in enumerate(clip.tolist()):
        members.setdefault(c, []).append(i)
    for idx in members.values():
        df.update(set().union(*(counts[i].keys() for i in idx)))
    log_n = math.log(max(len(clip_keys), 1))
    idf = {g: log_n - math.log(max(1.0, d)) for g, d in df.items()}
    vecs = [_vectors(c, idf, max_order) for c in counts]
    scores = np.full(len(texts), np.nan)
    for idx in members.values():
        for i in idx:
            refs = [j for j in idx if authors[j] != authors[i]]
            if refs:
                scores[i] = scale * np.mean([_sim(vecs[i], vecs[j], len(tokens[i]),
                                                  len(tokens[j]), sigma) for j in refs])
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
                       [(clip_keys[clip[i]], authors[i], float(scores[i]))
                        for i in range(len(texts))], recipe)


def _sim(h, r, len_h: int, len_r: int, sigma: float) -> float:
    (vh, nh), (vr, nr) = h, r
    penalty = math.exp(-((len_h - len_r) ** 2) / (2.0 * sigma * sigma))
    total = 0.0
    for n in range(len(vh)):
        if nh[n] == 0.0 or nr[n] == 0.0:
            continue
        dot = sum(min(v, vr[n][g]) * vr[n][g] for g, v in vh[n].items() if g in vr[n])
        total += dot / (nh[n] * nr[n]) * penalty
    return total / len(vh)
