"""Krippendorff's alpha (nominal, ordinal, interval) with missing ratings.

Everything is computed from per-unit sufficient statistics, so the same arrays give the point
value (sum over units) and bootstrap replicates (weighted sums over resampled units), see
:mod:`clipscribe.agreement.bootstrap`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable, Sequence

import numpy as np

from . import _checks
from ._encode import encode_matrix
from ._recipe import Recipe, Score
from .bootstrap import Interval, bootstrap_intervals
from .labels import ONE_CATEGORY, codes_to_table

NO_PAIRABLE = "no unit has two ratings: undefined (NaN)"


@dataclass(frozen=True)
class UnitStats:
    """Per-unit statistics (units x K) and the function turning their column sums into alpha.

    ``finish`` takes an array (..., K) of sums and returns alpha (...,).
    """

    stats: np.ndarray
    finish: Callable[[np.ndarray], np.ndarray]
    n_pairable: int


def _ratio(num: np.ndarray, den: np.ndarray, n: np.ndarray) -> np.ndarray:
    """``1 - num/den`` with the package's degenerate rules: den == 0 -> 1.0, n < 2 -> NaN."""
    num, den, n = np.asarray(num, float), np.asarray(den, float), np.asarray(n, float)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = 1.0 - num / den
    out = np.where(den == 0.0, 1.0, out)
    return np.where(n < 2, np.nan, out)


def nominal_unit_stats(table: np.ndarray) -> UnitStats:
    """Columns: m_u, D_o,u and the V category counts (units with m_u < 2 zeroed)."""
    t = table.astype(np.float64)
    m = t.sum(axis=1)
    ok = m >= 2
    t[~ok] = 0.0
    m = np.where(ok, m, 0.0)
    with np.errstate(divide="ignore", invalid="ignore"):
        do = np.where(ok, (m * m - (t * t).sum(axis=1)) / (m - 1.0), 0.0)
    stats = np.column_stack([m, do, t])

    def finish(s: np.ndarray) -> np.ndarray:
        n, d_o, n_c = s[..., 0], s[..., 1], s[..., 2:]
        return _ratio((n - 1.0) * d_o, n * n - (n_c * n_c).sum(axis=-1), n)

    return UnitStats(stats, finish, int(ok.sum()))


def binary_unit_stats(table: np.ndarray) -> list[UnitStats]:
    """Nominal alpha of each category against all others (one UnitStats per category)."""
    t = table.astype(np.float64)
    m = t.sum(axis=1)
    ok = m >= 2
    out = []
    for j in range(t.shape[1]):
        c = np.where(ok, t[:, j], 0.0)
        mm = np.where(ok, m, 0.0)
        with np.errstate(divide="ignore", invalid="ignore"):
            do = np.where(ok, 2.0 * c * (mm - c) / (mm - 1.0), 0.0)

        def finish(s: np.ndarray) -> np.ndarray:
            n, d_o, n_l = s[..., 0], s[..., 1], s[..., 2]
            return _ratio((n - 1.0) * d_o, 2.0 * n_l * (n - n_l), n)

        out.append(UnitStats(np.column_stack([mm, do, c]), finish, int(ok.sum())))
    return out


def ordinal_unit_stats(table: np.ndarray, *, per_unit: bool = True) -> UnitStats:
    r"""Columns: the V*V coincidence contributions of each unit (row-major); with
    ``per_unit=False`` one row holding their sum (the coincidence matrix), computed as
    :math:`T^\top \mathrm{diag}(w) T - \mathrm{diag}(T^\top w)`, :math:`w_u = 1/(m_u - 1)`."""
    t = table.astype(np.float64)
    v = t.shape[1]
    m = t.sum(axis=1)
    ok = m >= 2
    inv = np.where(ok, 1.0 / np.where(ok, m - 1.0, 1.0), 0.0)
    if per_unit:
        o_u = (t[:, :, None] * t[:, None, :]) - t[:, :, None] * np.eye(v)[None]
        stats = (o_u * inv[:, None, None]).reshape(len(t), v * v)
    else:
        tw = t * inv[:, None]
        stats = (tw.T @ t - np.diag(tw.sum(axis=0))).reshape(1, v * v)

    def finish(s: np.ndarray) -> np.ndarray:
        o = s.reshape(*s.shape[:-1], v, v)
        n_c = o.sum(axis=-1)
        n = n_c.sum(axis=-1)
        cum = np.cumsum(n_c, axis=-1)
        lo = np.minimum.outer(np.arange(v), np.arange(v))
        hi = np.maximum.outer(np.arange(v), np.arange(v))
        between = cum[..., hi] - cum[..., lo] + n_c[..., lo]
        delta = (between - (n_c[..., :, None] + n_c[..., None, :]) / 2.0) ** 2
        expected = n_c[..., :, None] * n_c[..., None, :] * delta
        return _ratio((n - 1.0) * (o * delta).sum(axis=(-2, -1)), expected.sum(axis=(-2, -1)), n)

    return UnitStats(stats, finish, int(ok.sum()))


def interval_unit_stats(values: np.ndarray) -> UnitStats:
    """Columns: m_u, D_o,u, sum x, sum x^2 (values centred on the pairable mean)."""
    vals = np.asarray(values, dtype=np.float64)
    mask = ~np.isnan(vals)
    m = mask.sum(axis=0).astype(np.float64)
    ok = m >= 2
    mask &= ok[None, :]
    m = np.where(ok, m, 0.0)
    centre = vals[mask].mean() if mask.any() else 0.0
    x = np.where(mask, vals - centre, 0.0)
    s1, s2 = x.sum(axis=0), (x * x).sum(axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        do = np.where(ok, 2.0 * (m * s2 - s1 * s1) / (m - 1.0), 0.0)
    stats = np.column_stack([m, do, s1, s2])

    def finish(s: np.ndarray) -> np.ndarray:
        n, d_o, a1, a2 = s[..., 0], s[..., 1], s[..., 2], s[..., 3]
        return _ratio((n - 1.0) * d_o, 2.0 * (n * a2 - a1 * a1), n)

    return UnitStats(stats, finish, int(ok.sum()))


def unit_stats(data: Any, *, level: str = "nominal", labels: Sequence[Any] | None = None,
               per_unit: bool = True) -> tuple[UnitStats, np.ndarray, list]:
    """Checked data -> (UnitStats, codes, categories); shared by alpha and its bootstrap."""
    _checks.choice("level", level, _checks.LEVELS)
    arr = _checks.reliability_data(data)
    if level == "interval":
        vals = _interval_values(arr, labels)
        return interval_unit_stats(vals), np.zeros((0, 0), dtype=np.int64), []
    codes, cats = encode_matrix(arr, labels)
    table = codes_to_table(codes, len(cats))
    if level == "nominal":
        return nominal_unit_stats(table), codes, cats
    return ordinal_unit_stats(table, per_unit=per_unit), codes, cats


def _interval_values(arr: np.ndarray, labels) -> np.ndarray:
    if labels is not None:
        codes, cats = encode_matrix(arr, labels)
        out = np.full(codes.shape, np.nan)
        try:
            out[codes >= 0] = np.asarray(cats, dtype=np.float64)[codes[codes >= 0]]
        except (TypeError, ValueError):
            raise ValueError("level='interval' needs numeric labels") from None
        return out
    if arr.dtype.kind in "fiub":
        return arr.astype(np.float64)
    out = np.full(arr.shape, np.nan)
    for idx, v in np.ndenumerate(arr):
        if not _checks.is_missing(v):
            try:
                out[idx] = float(v)
            except (TypeError, ValueError):
                raise ValueError(f"level='interval' needs numbers, data{list(idx)}={v!r}") from None
    return out


def krippendorff_alpha(data: Any, *, level: str = "nominal",
                       labels: Sequence[Any] | None = None) -> Score:
    r"""Krippendorff's alpha for any number of raters, with missing ratings.

    Parameters
    ----------
    data : array_like, shape (raters, units)
        Ratings; ``None`` or NaN marks a missing rating. Units with fewer than two ratings are
        not pairable and drop out.
    level : {"nominal", "ordinal", "interval"}
        Level of measurement, which picks the difference function :math:`\delta^2_{ck}`.
    labels : sequence, optional
        Category order (ordinal) or the declared label set; default the sorted distinct values.

    Returns
    -------
    Score
        1.0 when only one value occurs among pairable ratings (0/0, our choice; the
        ``krippendorff`` package raises instead); NaN when no unit has two ratings.

    Notes
    -----
    From the coincidence matrix :math:`o_{ck} = \sum_u \frac{n_{uck}}{m_u - 1}` (ordered pairs of
    values c, k within unit u), marginals :math:`n_c` and :math:`n = \sum_c n_c`,

    .. math:: \alpha = 1 - (n - 1)\frac{\sum_{c,k} o_{ck}\,\delta^2_{ck}}
                                       {\sum_{c,k} n_c n_k\,\delta^2_{ck}}

    with :math:`\delta^2_{ck} = [c \ne k]` (nominal), :math:`(c - k)^2` (interval) and
    :math:`\left(\sum_{g=c}^{k} n_g - \frac{n_c + n_k}{2}\right)^2` over ranks (ordinal).

    Krippendorff, K. (2011). Computing Krippendorff's Alpha-Reliability. University of
    Pennsylvania, Annenberg School for Communication. https://repository.upenn.edu/asc_papers/43 ;
    Hayes, A.F. & Krippendorff, K. (2007). Answering the call for a standard reliability measure
    for coding data. Communication Methods and Measures 1(1):77-89.
    https://doi.org/10.1080/19312450709336664

    Examples
    --------
    >>> round(float(krippendorff_alpha([[1, 2, 3, 3], [1, 2, 3, 4]])), 3)
    0.696
    """
    arr = _checks.reliability_data(data)
    us, _, _ = unit_stats(arr, level=level, labels=labels, per_unit=False)
    sums = us.stats.sum(axis=0)
    value = float(us.finish(sums))
    note = None
    if us.n_pairable == 0:
        note = NO_PAIRABLE
    elif value == 1.0 and _single_value(us, level):
        note = ONE_CATEGORY
    recipe = Recipe.make("alpha", "krippendorff", level=level, n_raters=arr.shape[0],
                         n_items=us.n_pairable, note=note)
    return Score(value, recipe)


def _single_value(us: UnitStats, level: str) -> bool:
    s = us.stats.sum(axis=0)
    if level == "interval":
        return s[0] * s[3] - s[2] * s[2] == 0.0
    if level == "nominal":
        return int((s[2:] > 0).sum()) <= 1
    v = int(round(np.sqrt(len(s))))
    return int((s.reshape(v, v).sum(axis=1) > 0).sum()) <= 1


def bootstrap_alpha(data: Any, *, level: str = "nominal", labels: Sequence[Any] | None = None,
                    n_boot: int = 1000, seed: int = 0, confidence: float = 0.95
                    ) -> tuple[Score, Interval]:
    r"""Krippendorff's alpha with a percentile bootstrap interval that resamples units (clips).

    Parameters as in :func:`krippendorff_alpha`; ``n_boot`` resamples drawn with
    ``numpy.random.default_rng(seed)``; ``confidence`` the coverage (0.95).

    Notes
    -----
    Every replicate recomputes alpha, including its expected disagreement, from the resampled
    units' coincidences (:mod:`clipscribe.agreement.bootstrap`). Hayes & Krippendorff (2007)
    resample pairable values instead; resampling whole clips is our choice, because clips are
    what a lead samples and reviews. https://doi.org/10.1080/19312450709336664
    """
    arr = _checks.reliability_data(data)
    value = krippendorff_alpha(arr, level=level, labels=labels)
    us, _, _ = unit_stats(arr, level=level, labels=labels)
    (ci,) = bootstrap_intervals(us.stats, [us.finish], [slice(None)], n_boot=n_boot, seed=seed,
                                level=confidence)
    return Score(float(value), value.recipe.replace(options={
        "level": level, "ci": "bootstrap", "n_boot": n_boot, "seed": seed})), ci


def per_label_alpha(data: Any, *, labels: Sequence[Any] | None = None
                    ) -> dict[Any, Score]:
    r"""Agreement on each label against all the others: nominal alpha of the binarised data.

    For label l each rating becomes :math:`[x = l]` and
    :math:`lpha_l = 1 - (n-1) rac{\sum_u 2 n_{ul}(m_u - n_{ul})/(m_u - 1)}{2 n_l (n - n_l)}`,
    the nominal alpha of two categories (Krippendorff 2011,
    https://repository.upenn.edu/asc_papers/43). Returns ``{label: Score}``.
    """
    arr = _checks.reliability_data(data)
    codes, cats = encode_matrix(arr, labels)
    table = codes_to_table(codes, len(cats))
    out = {}
    for lab, us in zip(cats, binary_unit_stats(table)):
        out[lab] = Score(float(us.finish(us.stats.sum(axis=0))), Recipe.make(
            "alpha", "krippendorff-one-vs-rest", level="nominal", label=lab,
            n_raters=arr.shape[0], n_items=us.n_pairable))
    return out
