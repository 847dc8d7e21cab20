"""Leave-one-out ROUGE-L and chrF: each caption against the other annotators' captions of the
same clip (the same cross-reference scheme as :func:`~clipscribe.agreement.loo.leave_one_out_bleu`).

Each caption is tokenized (ROUGE-L) or cut into character n-grams (chrF) once; every
(caption, reference) pair of a clip is then scored, the longest common subsequences of all
pairs together in one vectorised pass.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

import numpy as np

from . import _checks
from ._recipe import Recipe
from .captions import ngram_index
from .chrf import f_score
from .loo import _flatten
from .rouge import Vocabulary, f_from_lcs, lcs_lengths, tokenize_rouge


@dataclass(frozen=True)
class LooOverlap:
    """Leave-one-out score of one metric: overall, per annotator, per caption.

    ``per_caption`` is NaN for a caption whose clip has no caption by another annotator;
    ``clips``/``authors`` give each caption's clip and annotator.
    """

    metric: str
    overall: float
    per_annotator: dict[str, float]
    per_caption: np.ndarray = field(repr=False)
    clips: list = field(repr=False)
    authors: list[str] = field(repr=False)
    recipe: Recipe = field(compare=False)
    annotator_recipes: dict[str, Recipe] = field(default_factory=dict, compare=False, repr=False)

    def per_clip(self) -> dict[Any, float]:
        """Mean per-caption score of each clip (clips with at least one scored caption)."""
        acc: dict[Any, list] = {}
        for c, s in zip(self.clips, self.per_caption.tolist()):
            if not np.isnan(s):
                acc.setdefault(c, []).append(s)
        return {c: float(np.mean(v)) for c, v in acc.items()}

    def to_dict(self) -> dict:
        return {"metric": self.metric, "overall": self.overall,
                "per_annotator": dict(self.per_annotator),
                "annotator_recipes": {k: r.to_dict() for k, r in self.annotator_recipes.items()},
                "recipe": self.recipe.to_dict()}


def _pairs(clip: np.ndarray, author: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """All (caption, reference) index pairs on the same clip by different annotators."""
    order = np.argsort(clip, kind="stable")
    cs = clip[order]
    start = np.searchsorted(cs, cs, side="left")
    count = np.searchsorted(cs, cs, side="right") - start
    hyp = np.repeat(order, count)
    offs = np.arange(len(hyp)) - np.repeat(np.cumsum(count) - count, count)
    ref = order[np.repeat(start, count) + offs]
    keep = author[hyp] != author[ref]
    return hyp[keep], ref[keep]


def _prepare(captions_by_clip):
    clip, authors, texts, clip_keys = _flatten(captions_by_clip)
    names = sorted(set(authors))
    aid = {a: i for i, a in enumerate(names)}
    author = np.fromiter((aid[a] for a in authors), dtype=np.int64, count=len(authors))
    hyp, ref = _pairs(clip, author)
    if len(hyp) == 0:
        raise ValueError("no caption has a caption by another annotator on its clip: "
                         "the leave-one-out score is undefined")
    return clip, authors, texts, clip_keys, names, author, hyp, ref


def _pair_char_stats(texts: list[str], clip: np.ndarray, author: np.ndarray, hyp: np.ndarray,
                     ref: np.ndarray, char_order: int) -> np.ndarray:
    """For each (hyp[p], ref[p]) pair, per order n: [hypothesis n-grams (0 when the reference
    has none, as :func:`~clipscribe.agreement.chrf.match_stats` counts them), reference
    n-grams, clipped matches], flattened to (pairs, 3 * char_order).

    Vectorised with numpy rather than one Counter per caption and pair: the character n-grams
    of all captions are counted once (the shared n-gram index over characters), entries of
    one clip that share an n-gram are paired by one sort, and each pair's matches are summed
    into a slot numbered within its clip (captions of a clip are contiguous)."""
    chars = ["".join(t.split()) for t in texts]
    index = ngram_index((tuple(c) for c in chars), char_order)
    length = index.lengths
    n_docs = len(chars)
    per_clip = np.bincount(clip, minlength=int(clip.max(initial=-1)) + 1)
    first = np.cumsum(per_clip) - per_clip
    pos = np.arange(n_docs) - first[clip]
    base = np.cumsum(per_clip * per_clip) - per_clip * per_clip
    slots = int((per_clip * per_clip).sum())

    def slot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
        return base[clip[a]] + pos[a] * per_clip[clip[a]] + pos[b]

    pair_slot = slot(hyp, ref)
    out = np.zeros((len(hyp), 3 * char_order), dtype=np.int64)
    for n, order in enumerate(index.orders):
        h = np.maximum(length[hyp] - n, 0)
        r = np.maximum(length[ref] - n, 0)
        out[:, 3 * n] = np.where(r > 0, h, 0)
        out[:, 3 * n + 1] = r
        if not len(order.doc):
            continue
        group = clip[order.doc] * order.n_keys + order.key
        sort = np.argsort(group, kind="stable")
        g, doc, count = group[sort], order.doc[sort], order.count[sort]
        starts = np.flatnonzero(np.r_[True, g[1:] != g[:-1]])
        sizes = np.diff(np.r_[starts, len(g)])
        size_of = np.repeat(sizes, sizes)
        left = np.repeat(np.arange(len(g)), size_of)
        offset = np.arange(len(left)) - np.repeat(np.cumsum(size_of) - size_of, size_of)
        right = np.repeat(np.repeat(starts, sizes), size_of) + offset
        keep = author[doc[left]] != author[doc[right]]
        left, right = left[keep], right[keep]
        matches = np.bincount(slot(doc[left], doc[right]),
                              weights=np.minimum(count[left], count[right]), minlength=slots)
        out[:, 3 * n + 2] = matches[pair_slot].astype(np.int64)
    return out


def _best_per_caption(hyp: np.ndarray, f: np.ndarray, n: int) -> np.ndarray:
    """Index into the pair arrays of each caption's best pair (highest f, first on ties); -1
    where a caption has no pair."""
    order = np.lexsort((np.arange(len(hyp)), -f, hyp))
    first = np.ones(len(order), bool)
    first[1:] = hyp[order][1:] != hyp[order][:-1]
    best = np.full(n, -1, dtype=np.int64)
    best[hyp[order][first]] = order[first]
    return best


def leave_one_out_rouge_l(captions_by_clip: Mapping[Any, Sequence[Any]]) -> LooOverlap:
    """ROUGE-L F-measure (0-1) of every caption against the other annotators' captions of its
    clip, best reference as in :func:`~clipscribe.agreement.rouge.rouge_l`.

    ``overall`` is the mean over captions that have a reference; ``per_annotator`` the mean
    over that annotator's captions. Lin (2004), https://aclanthology.org/W04-1013
    """
    clip, authors, texts, clip_keys, names, author, hyp, ref = _prepare(captions_by_clip)
    vocab = Vocabulary()
    ids = [vocab.ids(tokenize_rouge(t)) for t in texts]
    lengths = np.fromiter((len(x) for x in ids), dtype=np.int64, count=len(ids))
    lcs = lcs_lengths([ids[i] for i in hyp.tolist()], [ids[j] for j in ref.tolist()])
    f, _, _ = f_from_lcs(lcs, lengths[hyp], lengths[ref])
    best = _best_per_caption(hyp, f, len(texts))
    per = np.where(best >= 0, f[np.maximum(best, 0)], np.nan)

    def recipe(n, annot):
        return Recipe.make("rouge", "L-leave-one-out", tok="alnum-lower", stem="none", beta=1,
                           scale="0-1", aggregate="mean", n_items=n, n_raters=len(annot),
                           annotators=annot)

    scored = ~np.isnan(per)
    recipes = {a: recipe(int((scored & (author == i)).sum()), [a]) for i, a in enumerate(names)
               if (scored & (author == i)).any()}
    per_annot = {a: float(np.mean(per[scored & (author == names.index(a))])) for a in recipes}
    return LooOverlap("rouge-l", float(np.mean(per[scored])), per_annot, per,
                      [clip_keys[c] for c in clip.tolist()], authors,
                      recipe(int(scored.sum()), names), recipes)


def leave_one_out_chrf(captions_by_clip: Mapping[Any, Sequence[Any]], *, char_order: int = 6,
                       beta: float = 2.0) -> LooOverlap:
    """chrF (0-100) of every caption against the other annotators' captions of its clip, as
    :func:`~clipscribe.agreement.chrf.corpus_chrf` computes it: per caption the reference with
    the highest sentence chrF, corpus scores from summed statistics (``overall`` over all
    captions, ``per_annotator`` over each annotator's). ``per_caption`` holds sentence chrF.
    Popović (2015), https://doi.org/10.18653/v1/W15-3049
    """
    char_order = _checks.positive_int("char_order", char_order)
    beta = _checks.finite_number("beta", beta, minimum=0.0)
    clip, authors, texts, clip_keys, names, author, hyp, ref = _prepare(captions_by_clip)
    stats = _pair_char_stats([t for t in texts], clip, author, hyp, ref, char_order)
    f = f_score(stats, beta)
    best = _best_per_caption(hyp, f, len(texts))
    scored = best >= 0
    cap_stats = np.where(scored[:, None], stats[np.maximum(best, 0)], 0)
    per = np.where(scored, f_score(cap_stats, beta), np.nan)

    def recipe(n, annot):
        return Recipe.make("chrf", "leave-one-out", char_order=char_order, word_order=0,
                           beta=beta, whitespace="removed", case="kept", n_items=n,
                           n_raters=len(annot), annotators=annot)

    recipes, per_annot = {}, {}
    for i, a in enumerate(names):
        sel = scored & (author == i)
        if sel.any():
            recipes[a] = recipe(int(sel.sum()), [a])
            per_annot[a] = float(f_score(cap_stats[sel].sum(axis=0), beta))
    overall = float(f_score(cap_stats[scored].sum(axis=0), beta))
    return LooOverlap("chrf", overall, per_annot, per, [clip_keys[c] for c in clip.tolist()],
                      authors, recipe(int(scored.sum()), names), recipes)
