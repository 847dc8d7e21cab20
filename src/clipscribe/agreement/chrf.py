r"""chrF: character n-gram F-score of captions against references (Popović 2015).

Whitespace is removed before the character n-grams (orders 1..6 by default) are counted; per
caption the reference with the highest sentence chrF counts, and the corpus score comes from
the summed statistics. Scores are on a 0-100 scale.

Popović, M. (2015). chrF: character n-gram F-score for automatic MT evaluation. Proceedings of
the Tenth Workshop on Statistical Machine Translation, 392-395.
https://doi.org/10.18653/v1/W15-3049
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from . import _checks
from ._recipe import Recipe

POPOVIC_2015 = ("Popović, M. (2015). chrF: character n-gram F-score for automatic MT "
                "evaluation. WMT 2015, 392-395. doi:10.18653/v1/W15-3049")
_EPS = 1e-16   # stands in for a precision or recall with nothing to divide by


@dataclass(frozen=True)
class ChrfScore:
    """A chrF value (0-100) with the statistics it came from."""

    score: float
    char_order: int
    beta: float
    stats: list[int]        # hyp, ref, match counts per order, flattened
    recipe: Recipe = field(compare=False)

    def __float__(self) -> float:
        return float(self.score)

    def to_dict(self) -> dict:
        return {"score": self.score, "char_order": self.char_order, "beta": self.beta,
                "recipe": self.recipe.to_dict()}


def char_ngrams(text: str, order: int) -> list[Counter]:
    """Counters of the character n-grams of orders 1..order of ``text`` without whitespace."""
    s = "".join(text.split())
    return [Counter(s[i:i + n] for i in range(len(s) - n + 1)) for n in range(1, order + 1)]


def match_stats(hyp: list[Counter], ref: list[Counter]) -> list[int]:
    """[hyp count, ref count, matches] per order; an order the reference lacks counts no
    hypothesis n-gram either."""
    out: list[int] = []
    for h, r in zip(hyp, ref):
        match = sum(min(c, r[g]) for g, c in h.items() if g in r)
        out += [sum(h.values()) if r else 0, sum(r.values()), match]
    return out


def f_score(stats, beta: float = 2.0) -> np.ndarray:
    r"""chrF (0-100) of rows of flattened statistics (..., 3 * order), vectorised."""
    s = np.asarray(stats, dtype=np.float64)
    s = s.reshape(*s.shape[:-1], -1, 3)
    nh, nr, nm = s[..., 0], s[..., 1], s[..., 2]
    with np.errstate(divide="ignore", invalid="ignore"):
        prec = np.where(nh > 0, nm / nh, _EPS)
        rec = np.where(nr > 0, nm / nr, _EPS)
    seen = (nh > 0) & (nr > 0)
    eff = seen.sum(axis=-1)
    safe = np.maximum(eff, 1)
    avg_p = np.where(eff > 0, np.where(seen, prec, 0.0).sum(axis=-1) / safe, 0.0)
    avg_r = np.where(eff > 0, np.where(seen, rec, 0.0).sum(axis=-1) / safe, 0.0)
    b2 = beta * beta
    den = b2 * avg_p + avg_r
    ok = (avg_p + avg_r) != 0
    return np.where(ok, 100.0 * (1 + b2) * avg_p * avg_r / np.where(ok, den, 1.0), 0.0)


def best_stats(hyp: list[Counter], refs: list[list[Counter]], beta: float) -> list[int]:
    """Statistics against the reference with the highest sentence chrF (first on ties)."""
    best, best_f = None, -1.0
    for r in refs:
        st = match_stats(hyp, r)
        f = float(f_score(st, beta))
        if f > best_f:
            best, best_f = st, f
    assert best is not None
    return best


def corpus_chrf(hypotheses: Sequence[str], reference_streams: Sequence[Sequence[str | None]], *,
                char_order: int = 6, beta: float = 2.0) -> ChrfScore:
    r"""Corpus chrF of captions against one or more reference streams.

    Parameters
    ----------
    hypotheses : sequence of str
    reference_streams : sequence of sequences of str
        ``reference_streams[j][i]`` is the j-th reference of ``hypotheses[i]``; ``None`` marks a
        missing one, so the number of references may vary. A hypothesis with no reference is
        left out (recipe note).
    char_order : int
        Highest character n-gram order, default 6.
    beta : float
        Weight of recall against precision, default 2.

    Returns
    -------
    ChrfScore
        ``.score`` on 0-100 and ``.recipe``.

    Notes
    -----
    Per order n, :math:`P_n = m_n / h_n` and :math:`R_n = m_n / r_n` from the summed hypothesis
    n-gram count :math:`h_n`, reference count :math:`r_n` and clipped matches :math:`m_n`;
    averaged over the orders where both counts are positive,

    .. math:: \mathrm{chrF}_\beta = 100\,(1+\beta^2)
              \frac{\bar P \bar R}{\beta^2 \bar P + \bar R}

    and 0 when :math:`\bar P + \bar R = 0`. Popović, M. (2015). chrF: character n-gram F-score
    for automatic MT evaluation. WMT 2015, 392-395. https://doi.org/10.18653/v1/W15-3049

    Examples
    --------
    >>> round(corpus_chrf(["a man waves"], [["a man waves"]]).score, 6)
    100.0
    """
    char_order = _checks.positive_int("char_order", char_order)
    beta = _checks.finite_number("beta", beta, minimum=0.0)
    if isinstance(reference_streams, str) or any(isinstance(s, str) for s in reference_streams):
        raise ValueError("reference_streams must be a sequence of streams (lists of strings)")
    streams = [list(s) for s in reference_streams]
    for j, s in enumerate(streams):
        if len(s) != len(hypotheses):
            raise ValueError(f"reference stream {j} has {len(s)} lines for "
                             f"{len(hypotheses)} hypotheses")
    per_hyp = [[s[i] for s in streams] for i in range(len(hypotheses))]
    hyps, refs = _checks.hypotheses_references(hypotheses, per_hyp)
    total = np.zeros(3 * char_order, dtype=np.int64)
    used = 0
    for h, rs in zip(hyps, refs):
        if not rs:
            continue
        total += best_stats(char_ngrams(h, char_order), [char_ngrams(r, char_order) for r in rs],
                            beta)
        used += 1
    if used == 0:
        raise ValueError("no hypothesis has a reference: chrF is undefined")
    note = None if used == len(hyps) else f"{len(hyps) - used} items without references skipped"
    recipe = Recipe.make("chrf", "corpus", char_order=char_order, word_order=0, beta=beta,
                         whitespace="removed", case="kept", n_items=used, note=note)
    return ChrfScore(float(f_score(total, beta)), char_order, beta, total.tolist(), recipe)
