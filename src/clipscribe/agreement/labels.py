"""Agreement on clip labels: Cohen's kappa, Fleiss' kappa, observed agreement, confusion matrices.

Krippendorff's alpha lives in :mod:`clipscribe.agreement.alpha`; bootstrap intervals in
:mod:`clipscribe.agreement.bootstrap`.

Degenerate input, decided once for the whole package: when every rating falls in one category
the chance-corrected coefficients are 0/0 (observed and expected agreement are both 1). We return
1.0, because no disagreement was observed, and say so in the recipe's ``note``. When no item is
rated by both raters there is nothing to measure and we return NaN (note ``"no paired items"``).
"""

from __future__ import annotations

from typing import Any, Sequence

import numpy as np

from . import _checks
from ._encode import category_order, encode
from ._recipe import Recipe, Score

ONE_CATEGORY = "one category only: 0/0 taken as 1.0 (our choice)"
NO_PAIRS = "no paired items: undefined (NaN)"


def weight_matrix(n_cats: int, weights: str | None) -> np.ndarray:
    """Disagreement weights ``w_ij``: 0 on the diagonal; 1, ``|i-j|`` or ``(i-j)^2`` elsewhere."""
    _checks.choice("weights", weights, _checks.WEIGHTS)
    i = np.arange(n_cats)
    d = np.abs(i[:, None] - i[None, :]).astype(np.float64)
    if weights is None:
        return (d > 0).astype(np.float64)
    return d if weights == "linear" else d * d


def _paired_codes(a, b, labels):
    la, lb = _checks.rating_pair(a, b)
    cats = category_order(la + lb, labels)
    ca, cb = encode(la, cats, name="a"), encode(lb, cats, name="b")
    keep = (ca >= 0) & (cb >= 0)
    return ca[keep], cb[keep], cats


def confusion_matrix(a: Sequence[Any], b: Sequence[Any], *, labels: Sequence[Any] | None = None
                     ) -> tuple[np.ndarray, list]:
    """Counts ``C[i, j]`` of items rated ``labels[i]`` by rater a and ``labels[j]`` by rater b.

    Items missing (None/NaN) for either rater are left out. Returns ``(C, labels)``.
    """
    ca, cb, cats = _paired_codes(a, b, labels)
    v = len(cats)
    return np.bincount(ca * v + cb, minlength=v * v).reshape(v, v), cats


def kappa_from_confusion(c: np.ndarray, weights: str | None = None) -> tuple[float, str | None]:
    """Cohen's kappa from a confusion matrix; returns ``(value, note)`` (see module docstring)."""
    c = np.asarray(c, dtype=np.float64)
    n = c.sum()
    if n == 0:
        return float("nan"), NO_PAIRS
    w = weight_matrix(c.shape[0], weights)
    expected = np.outer(c.sum(axis=1), c.sum(axis=0)) / n
    num, den = float((w * c).sum()), float((w * expected).sum())
    if den == 0.0:
        return 1.0, ONE_CATEGORY
    return 1.0 - num / den, None


def cohen_kappa(a: Sequence[Any], b: Sequence[Any], *, weights: str | None = None,
                labels: Sequence[Any] | None = None) -> Score:
    r"""Cohen's kappa between two raters, optionally weighted for ordinal labels.

    Parameters
    ----------
    a, b : sequence, length n
        Ratings of the same n items by two raters; ``None`` or NaN marks a missing rating and the
        item is then left out.
    weights : {None, "linear", "quadratic"}
        Disagreement weights ``w_ij`` = ``[i != j]``, ``|i - j|`` or ``(i - j)^2`` where i, j are
        positions in ``labels``. Use the weighted forms only for ordered label sets.
    labels : sequence, optional
        The categories in order; default the sorted distinct ratings. A rating not in ``labels``
        raises ValueError.

    Returns
    -------
    Score
        A float with ``.recipe``. 1.0 when both raters used one and the same category only (0/0,
        our choice); NaN when no item has both ratings.

    Notes
    -----
    With confusion counts :math:`O_{ij}` over :math:`n` items and expected counts
    :math:`E_{ij} = O_{i\cdot} O_{\cdot j} / n`,

    .. math:: \kappa_w = 1 - \frac{\sum_{ij} w_{ij} O_{ij}}{\sum_{ij} w_{ij} E_{ij}}

    which for ``weights=None`` equals :math:`(p_o - p_e)/(1 - p_e)`.

    Cohen, J. (1960). A coefficient of agreement for nominal scales. Educational and
    Psychological Measurement 20(1):37-46. https://doi.org/10.1177/001316446002000104 ;
    Cohen, J. (1968). Weighted kappa. Psychological Bulletin 70(4):213-220.
    https://doi.org/10.1037/h0026256

    Examples
    --------
    >>> round(float(cohen_kappa(["x", "y", "y", "x"], ["x", "y", "x", "x"])), 3)
    0.5
    """
    _checks.choice("weights", weights, _checks.WEIGHTS)
    c, cats = confusion_matrix(a, b, labels=labels)
    value, note = kappa_from_confusion(c, weights)
    recipe = Recipe.make("kappa", "cohen", weights=weights or "none", n_raters=2,
                         n_items=int(c.sum()), note=note)
    return Score(value, recipe)


def fleiss_from_table(t: np.ndarray, m: int | None = None) -> tuple[float, str | None]:
    r"""Fleiss' kappa from an already checked table; returns ``(value, note)``.

    Uses :math:`\bar P = (\sum_{ij} n_{ij}^2 - N m) / (N m (m-1))`, the mean of the
    :math:`P_i`, so one pass over the table suffices.
    """
    n_items = t.shape[0]
    if m is None:
        m = int(t[0].sum())
    t = np.ascontiguousarray(t, dtype=np.float64)
    flat = t.reshape(-1)
    squares = float(flat @ flat)
    total = float(n_items) * m
    p_cat = (np.ones(n_items) @ t) / total
    p_bar = (squares - total) / (total * (m - 1))
    p_exp = float(np.dot(p_cat, p_cat))
    if p_exp >= 1.0:
        return 1.0, ONE_CATEGORY
    return (p_bar - p_exp) / (1.0 - p_exp), None


def fleiss_kappa(table: Any) -> Score:
    r"""Fleiss' kappa for a fixed number of raters per item.

    Parameters
    ----------
    table : array_like, shape (items, categories)
        ``table[i, j]`` = how many raters put item i in category j. Every row must sum to the
        same number of raters m >= 2 (else ValueError).

    Returns
    -------
    Score
        1.0 when all ratings fall in one category (0/0, our choice).

    Notes
    -----
    With N items, m raters, :math:`P_i = (\sum_j n_{ij}^2 - m) / (m(m-1))`,
    :math:`p_j = \sum_i n_{ij} / (N m)`,

    .. math:: \kappa = \frac{\bar P - \bar P_e}{1 - \bar P_e}, \quad
              \bar P = \frac1N \sum_i P_i, \quad \bar P_e = \sum_j p_j^2

    Fleiss, J.L. (1971). Measuring nominal scale agreement among many raters. Psychological
    Bulletin 76(5):378-382. https://doi.org/10.1037/h0031619

    Examples
    --------
    >>> round(float(fleiss_kappa([[3, 0], [0, 3], [2, 1]])), 4)
    0.55
    """
    t, m = _checks.count_table(table)
    value, note = fleiss_from_table(t, m)
    recipe = Recipe.make("kappa", "fleiss", n_raters=m, n_items=t.shape[0],
                         note=note)
    return Score(value, recipe)


def observed_agreement(a: Sequence[Any], b: Sequence[Any]) -> Score:
    r"""Share of items (rated by both) on which two raters gave the same label.

    .. math:: p_o = \frac{1}{n} \sum_i [a_i = b_i]

    Not chance-corrected; shown beside kappa. NaN when no item has both ratings. Source: the
    :math:`p_o` term of Cohen (1960), https://doi.org/10.1177/001316446002000104
    """
    c, _ = confusion_matrix(a, b)
    n = int(c.sum())
    value = float(np.trace(c) / n) if n else float("nan")
    return Score(value, Recipe.make("agreement", "observed", n_raters=2, n_items=n,
                                    note=None if n else NO_PAIRS))


def codes_to_table(codes: np.ndarray, n_cats: int) -> np.ndarray:
    """raters x units int codes (-1 missing) -> units x categories counts."""
    r, u = codes.shape
    unit = np.broadcast_to(np.arange(u), (r, u))
    keep = codes >= 0
    flat = unit[keep] * n_cats + codes[keep]
    return np.bincount(flat, minlength=u * n_cats).reshape(u, n_cats)


def pairwise_kappa(data: Any, *, weights: str | None = None,
                   labels: Sequence[Any] | None = None) -> dict[tuple[int, int], Score]:
    """Cohen's kappa (see :func:`cohen_kappa`) for every pair of rows of a raters x items
    matrix, on the items both rated; keys are row index pairs ``(i, j)`` with ``i < j``."""
    rows = [list(r) for r in data]
    if len(rows) < 2:
        raise ValueError(f"data needs at least 2 raters (rows), got {len(rows)}")
    if len({len(r) for r in rows}) != 1:
        raise ValueError("data must be raters x items: every row needs the same length")
    cats = category_order([x for r in rows for x in r], labels)
    return {(i, j): cohen_kappa(rows[i], rows[j], weights=weights, labels=cats)
            for i in range(len(rows)) for j in range(i + 1, len(rows))}
