"""BLEU: corpus and sentence scores from sufficient statistics (Papineni et al. 2002).

The arithmetic is one vectorised function over statistics (matches, totals, lengths), so a
corpus score, many sentence scores and leave-one-out scores share it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from . import _checks
from ._recipe import Recipe
from .captions import ngram_counts, tokenizer

_LOG_ZERO = -9999999999.0  # log of a zero precision: drives the geometric mean to 0
SMOOTH_DEFAULT = {"floor": 0.1, "add-k": 1.0}



@dataclass(frozen=True)
class BleuScore:
    """A BLEU value with its parts; ``score`` and ``precisions`` are on a 0-100 scale."""

    score: float
    precisions: list[float]
    brevity_penalty: float
    hyp_len: int
    ref_len: int
    counts: list[int]
    totals: list[int]
    recipe: Recipe = field(compare=False)
    cumulative: list[float] = field(default_factory=list)  # BLEU-1..N, same settings

    def __float__(self) -> float:
        return float(self.score)

    def to_dict(self) -> dict:
        return {"score": self.score, "precisions": self.precisions,
                "brevity_penalty": self.brevity_penalty, "hyp_len": self.hyp_len,
                "ref_len": self.ref_len, "counts": self.counts, "totals": self.totals,
                "cumulative": self.cumulative, "recipe": self.recipe.to_dict()}


def bleu_from_stats(correct, total, hyp_len, ref_len, *, smooth: str | None = None,
                    smooth_value: float | None = None, effective_order: bool = False
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Vectorised BLEU over rows of statistics; returns ``(score, precisions, bp)`` (0-100).

    ``correct`` and ``total`` are (..., N) clipped matches and hypothesis n-gram counts.
    Rules: a row with no match at all scores 0; an order with no hypothesis n-gram ends the
    product (later precisions are 0, so the score is 0 unless ``effective_order``, which then
    averages only the orders seen); zero matches at an order give 0 unless smoothed:
    ``"floor"`` uses ``smooth_value/total`` (default 0.1), ``"exp"`` uses ``1/(2^k total)``
    for the k-th such order, ``"add-k"`` adds ``smooth_value`` (default 1) to matches and
    totals of orders >= 2.
    """
    _checks.choice("smooth", smooth, _checks.SMOOTHING)
    c = np.array(correct, dtype=np.float64, ndmin=2)
    t = np.array(total, dtype=np.float64, ndmin=2)
    hl = np.asarray(hyp_len, dtype=np.float64).reshape(c.shape[:-1])
    rl = np.asarray(ref_len, dtype=np.float64).reshape(c.shape[:-1])
    k = SMOOTH_DEFAULT.get(smooth, 0.0) if smooth_value is None else float(smooth_value)
    order = c.shape[-1]
    with np.errstate(divide="ignore", invalid="ignore"):
        bp = np.where(hl >= rl, 1.0, np.where(hl > 0, np.exp(1.0 - rl / hl), 0.0))
        any_match = (c > 0).any(axis=-1)
        prec = np.zeros_like(c)
        alive = np.ones(c.shape[:-1], dtype=bool)
        eff = np.full(c.shape[:-1], order, dtype=np.float64) if not effective_order else \
            np.zeros(c.shape[:-1])
        halvings = np.ones(c.shape[:-1])
        for n in range(order):
            cn, tn = c[..., n], t[..., n]
            if smooth == "add-k" and n > 0:
                cn, tn = cn + k, tn + k
            alive &= tn > 0
            if effective_order:
                eff = np.where(alive, n + 1.0, eff)
            zero = alive & (cn == 0)
            if smooth == "exp":
                halvings = np.where(zero, halvings * 2.0, halvings)
                prec[..., n] = np.where(zero, 100.0 / (halvings * tn), 0.0)
            elif smooth == "floor":
                prec[..., n] = np.where(zero, 100.0 * k / tn, 0.0)
            prec[..., n] = np.where(alive & (cn > 0), 100.0 * cn / tn, prec[..., n])
        logs = np.where(prec > 0, np.log(np.where(prec > 0, prec, 1.0)), _LOG_ZERO)
        logs = np.where(np.arange(order) < eff[..., None], logs, 0.0)
        score = bp * np.exp(logs.sum(axis=-1) / np.maximum(eff, 1.0))
    score = np.where(any_match, score, 0.0)
    prec = np.where(any_match[..., None], prec, 0.0)
    return score, prec, bp


def closest_ref_len(hyp_len: int, ref_lens: Sequence[int]) -> int:
    """Reference length closest to the hypothesis length; ties go to the shorter one."""
    return min(ref_lens, key=lambda r: (abs(r - hyp_len), r))


def segment_stats(hyp: Sequence[str], refs: Sequence[Sequence[str]], max_order: int
                  ) -> tuple[int, int, list[int], list[int]]:
    """(hyp_len, ref_len, matches per order, hyp n-grams per order) of one tokenized item."""
    max_ref: dict = {}
    for r in refs:
        for g, cnt in ngram_counts(r, max_order).items():
            if cnt > max_ref.get(g, 0):
                max_ref[g] = cnt
    correct, total = [0] * max_order, [0] * max_order
    for g, cnt in ngram_counts(hyp, max_order).items():
        n = len(g) - 1
        total[n] += cnt
        correct[n] += min(cnt, max_ref.get(g, 0))
    return len(hyp), closest_ref_len(len(hyp), [len(r) for r in refs]), correct, total


def corpus_bleu(hypotheses: Sequence[str], references: Sequence[Sequence[str]], *,
                max_order: int = 4, tokenize: str = "13a", smooth: str | None = None,
                smooth_value: float | None = None) -> BleuScore:
    r"""Corpus BLEU of hypotheses against any number of references each.

    Parameters
    ----------
    hypotheses : sequence of str
    references : sequence of sequences of str
        ``references[i]`` are the references of ``hypotheses[i]``; their number may differ per
        item (``None`` entries are ignored). An item with no reference is left out of the
        statistics (it has nothing to be compared against; the recipe counts it as skipped).
    max_order : int
        Highest n-gram order N (BLEU-N).
    tokenize : {"13a", "none"}
        ``"13a"`` (default): mteval-v13a rules, see :mod:`clipscribe.agreement.captions`;
        ``"none"``: split on whitespace only.
    smooth : {None, "floor", "add-k", "exp"}
        None (default): a zero n-gram precision gives a score of 0. See :func:`bleu_from_stats`.
    smooth_value : float, optional
        Value for ``"floor"`` (default 0.1) and ``"add-k"`` (default 1).

    Returns
    -------
    BleuScore
        ``.score`` and ``.precisions`` on 0-100, ``.brevity_penalty``, ``.hyp_len``,
        ``.ref_len``, ``.recipe``. An empty hypothesis counts length 0 and no n-grams.

    Raises
    ------
    ValueError
        Mismatched lengths, non-string entries, bad options, or no item with a reference.

    Notes
    -----
    Clipped precision of order n over the corpus, with :math:`\mathrm{ref}` the per-item maximum
    count over its references, :math:`c` the total hypothesis length and :math:`r` the sum of
    the reference lengths closest to each hypothesis (ties to the shorter):

    .. math:: p_n = \frac{\sum_i \sum_{g \in \mathrm{hyp}_i^{(n)}}
                          \min(\#_{\mathrm{hyp}_i} g, \max_{\rho \in R_i} \#_\rho g)}
                         {\sum_i \sum_{g} \#_{\mathrm{hyp}_i} g}, \qquad
              \mathrm{BLEU} = \mathrm{BP} \exp\Big(\frac1N \sum_{n=1}^{N} \log p_n\Big),
              \quad \mathrm{BP} = \min(1, e^{1 - r/c})

    Papineni, K., Roukos, S., Ward, T. & Zhu, W.-J. (2002). BLEU: a method for automatic
    evaluation of machine translation. ACL 2002, 311-318. https://doi.org/10.3115/1073083.1073135

    Examples
    --------
    >>> round(corpus_bleu(["the cat sat on the mat"], [["the cat sat on the mat"]]).score, 6)
    100.0
    """
    hyps, refs = _checks.hypotheses_references(hypotheses, references)
    max_order = _checks.positive_int("max_order", max_order)
    tok = tokenizer(tokenize)
    _checks.choice("smooth", smooth, _checks.SMOOTHING)
    if smooth_value is not None:
        _checks.finite_number("smooth_value", smooth_value, minimum=0.0)
    sums = np.zeros(2 + 2 * max_order, dtype=np.int64)
    used = 0
    for h, rs in zip(hyps, refs):
        if not rs:
            continue
        hl, rl, c, t = segment_stats(tok(h), [tok(r) for r in rs], max_order)
        sums += np.array([hl, rl, *c, *t])
        used += 1
    if used == 0:
        raise ValueError("no hypothesis has a reference: BLEU is undefined")
    return _score_from_sums(sums, max_order, smooth, smooth_value, False, Recipe.make(
        "bleu", "corpus", order=max_order, tok=tokenize, smooth=smooth or "none",
        smooth_value=smooth_value, n_items=used,
        note=None if used == len(hyps) else f"{len(hyps) - used} items without references skipped"))


def sentence_bleu(hypothesis: str, references: Sequence[str], *, max_order: int = 4,
                  tokenize: str = "13a", smooth: str | None = "exp",
                  smooth_value: float | None = None, effective_order: bool = True) -> BleuScore:
    """BLEU of one sentence (see :func:`corpus_bleu`); by default smoothed with ``"exp"`` and
    averaged over the orders the hypothesis has (``effective_order``), so short captions do not
    score 0 for lack of 4-grams. Same source: Papineni et al. (2002), doi:10.3115/1073083.1073135;
    smoothing "exp" is method 3 of Chen & Cherry (2014), doi:10.3115/v1/W14-3346."""
    max_order = _checks.positive_int("max_order", max_order)
    hyps, refs = _checks.hypotheses_references([hypothesis], [references])
    if not refs[0]:
        raise ValueError("no references: sentence BLEU is undefined")
    tok = tokenizer(tokenize)
    hl, rl, c, t = segment_stats(tok(hyps[0]), [tok(r) for r in refs[0]], max_order)
    recipe = Recipe.make("bleu", "sentence", order=max_order, tok=tokenize,
                         smooth=smooth or "none", smooth_value=smooth_value,
                         effective_order=effective_order, n_items=1)
    return _score_from_sums(np.array([hl, rl, *c, *t]), max_order, smooth, smooth_value,
                            effective_order, recipe)


def _score_from_sums(s, max_order, smooth, smooth_value, effective_order, recipe) -> BleuScore:
    correct, total = s[2:2 + max_order], s[2 + max_order:]
    score, prec, bp = bleu_from_stats(correct, total, s[0], s[1], smooth=smooth,
                                      smooth_value=smooth_value, effective_order=effective_order)
    cumulative = [float(bleu_from_stats(correct[:k], total[:k], s[0], s[1], smooth=smooth,
                                        smooth_value=smooth_value,
                                        effective_order=effective_order)[0][0])
                  for k in range(1, max_order + 1)]
    return BleuScore(float(score[0]), [float(p) for p in prec[0]], float(bp[0]), int(s[0]),
                     int(s[1]), [int(x) for x in correct], [int(x) for x in total], recipe,
                     cumulative)
