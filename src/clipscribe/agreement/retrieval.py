"""Caption specificity: can a clip be found again from one of its captions?"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

import numpy as np

from . import _checks
from ._recipe import Recipe
from .captions import tokenizer
from .loo import _flatten


@dataclass(frozen=True)
class RetrievalResult:
    r_at_1: float
    r_at_5: float
    r_at_10: float
    median_rank: float
    ranks: dict[Any, int]
    recipe: Recipe = field(compare=False)

    def to_dict(self) -> dict:
        f = (lambda v: None if math.isnan(v) else v)
        return {"r_at_1": f(self.r_at_1), "r_at_5": f(self.r_at_5), "r_at_10": f(self.r_at_10),
                "median_rank": f(self.median_rank), "recipe": self.recipe.to_dict()}


def caption_retrieval(captions_by_clip: Mapping[Any, Sequence[Any]], *, seed: int = 0,
                      max_gallery: int = 1000, tokenize: str = "13a") -> RetrievalResult:
    r"""Retrieve each clip from one of its captions among all clips; report R@1/5/10, median rank.

    For each clip with at least two captions one caption is drawn (seeded) as the query; the
    clip's gallery entry is the sum of its other captions. Query and gallery are TF-IDF vectors
    of lower-cased 13a words with smoothed idf :math:`\log\frac{1 + D}{1 + \mathrm{df}} + 1`
    over the D gallery entries (common practice); similarity is the cosine. The rank of the
    true clip is :math:`1 + \#\{\text{other clips scoring} \ge \text{it}\}` (ties count
    against: our choice, so empty captions never look specific). Galleries above
    ``max_gallery`` clips are a seeded sample of that size (1k-clip test galleries are common
    practice in text-to-video retrieval) and the recipe says so.

    Salton, G. & Buckley, C. (1988). Term-weighting approaches in automatic text retrieval.
    Information Processing & Management 24(5):513-523. https://doi.org/10.1016/0306-4573(88)90021-0
    """
    max_gallery = _checks.positive_int("max_gallery", max_gallery, minimum=2)
    tok = tokenizer(tokenize)
    clip, _, texts, clip_keys = _flatten(captions_by_clip)
    rng = np.random.default_rng(seed)
    members: dict[int, list[int]] = {}
    for i, c in enumerate(clip.tolist()):
        members.setdefault(c, []).append(i)
    usable = [c for c, idx in members.items() if len(idx) >= 2]
    sampled = len(usable) > max_gallery
    if sampled:
        usable = sorted(rng.choice(usable, size=max_gallery, replace=False).tolist())
    if len(usable) < 2:
        nan = float("nan")
        return RetrievalResult(nan, nan, nan, nan, {}, Recipe.make(
            "retrieval", "tfidf-cosine", n_items=len(usable), note="fewer than 2 clips"))
    queries = {c: members[c][rng.integers(len(members[c]))] for c in usable}
    vocab: dict[str, int] = {}
    q_rows, g_rows = [], []
    for c in usable:
        q_rows.append([vocab.setdefault(w.lower(), len(vocab)) for w in tok(texts[queries[c]])])
        g_rows.append([vocab.setdefault(w.lower(), len(vocab)) for i in members[c]
                       if i != queries[c] for w in tok(texts[i])])
    n, v = len(usable), max(len(vocab), 1)
    q, g = _counts(q_rows, v), _counts(g_rows, v)
    idf = np.log((1.0 + n) / (1.0 + (g > 0).sum(axis=0))) + 1.0
    q, g = _unit(q * idf), _unit(g * idf)
    sim = q @ g.T
    own = np.diag(sim)
    ranks = (sim >= own[:, None]).sum(axis=1)  # the own clip counts once: rank = 1 + others
    recipe = Recipe.make("retrieval", "tfidf-cosine", query="one caption per clip", seed=seed,
                         gallery=n, sampled=sampled, tok=tokenize, n_items=n)
    return RetrievalResult(float((ranks <= 1).mean()), float((ranks <= 5).mean()),
                           float((ranks <= 10).mean()), float(np.median(ranks)),
                           {clip_keys[c]: int(r) for c, r in zip(usable, ranks)}, recipe)


def _counts(rows: list[list[int]], v: int) -> np.ndarray:
    m = np.zeros((len(rows), v))
    for i, r in enumerate(rows):
        if r:
            m[i] += np.bincount(r, minlength=v)
    return m


def _unit(m: np.ndarray) -> np.ndarray:
    norm = np.linalg.norm(m, axis=1, keepdims=True)
    return np.divide(m, norm, out=np.zeros_like(m), where=norm > 0)
