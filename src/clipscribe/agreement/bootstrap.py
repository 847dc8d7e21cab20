"""Bootstrap confidence intervals that resample clips (units), vectorised.

One set of resamples serves many statistics at once: every statistic is a function of column
sums of a per-unit matrix, so a replicate is ``W @ stats`` with ``W`` the resample counts.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

import numpy as np

from . import _checks

_CHUNK_CELLS = 4_000_000  # resample-count cells per chunk: bounds memory at ~32 MB


@dataclass(frozen=True, slots=True)
class Interval:
    """A percentile bootstrap interval."""

    low: float
    high: float
    level: float
    n_boot: int
    seed: int
    method: str = "percentile bootstrap over clips"

    def to_dict(self) -> dict:
        return {"low": _json_float(self.low), "high": _json_float(self.high), "level": self.level,
                "n_boot": self.n_boot, "seed": self.seed, "method": self.method}


def _json_float(x: float) -> float | None:
    return None if np.isnan(x) else float(x)


def replicate_sums(stats: np.ndarray, *, n_boot: int, seed: int,
                   row_keys: np.ndarray | None = None) -> np.ndarray:
    """Column sums of ``stats`` (units x K) over ``n_boot`` resamples of the units with
    replacement; returns (n_boot, K). Seeded ``numpy.random.Generator`` (PCG64).

    ``row_keys`` (optional, one integer per unit) must be equal exactly where rows of ``stats``
    are equal; it only makes finding the distinct rows cheaper."""
    n_boot = _checks.positive_int("n_boot", n_boot)
    units = stats.shape[0]
    rng = np.random.default_rng(seed)
    out = np.empty((n_boot, stats.shape[1]))
    if units == 0:
        out[:] = 0.0
        return out
    if row_keys is not None:
        _, first, counts = np.unique(row_keys, return_index=True, return_counts=True)
        rows = stats[first]
    else:
        rows, counts = np.unique(stats, axis=0, return_counts=True)
    if len(rows) * 2 <= units:
        # Units with identical statistics are interchangeable, so how often each distinct row is
        # drawn is multinomial(units, counts / units): the same distribution as drawing unit
        # indices, at a cost of distinct rows instead of units per replicate.
        w = rng.multinomial(units, counts / units, size=n_boot)
        return w.astype(np.float64) @ rows
    chunk = max(1, min(n_boot, _CHUNK_CELLS // units))
    dtype = np.int32 if units < 2**31 else np.int64
    for start in range(0, n_boot, chunk):
        b = min(chunk, n_boot - start)
        idx = rng.integers(0, units, size=(b, units), dtype=dtype)
        idx += (np.arange(b, dtype=dtype) * units)[:, None] if b * units < 2**31 else 0
        if b * units < 2**31:
            w = np.bincount(idx.ravel(), minlength=b * units).reshape(b, units)
        else:
            w = np.stack([np.bincount(r, minlength=units) for r in idx])
        out[start:start + b] = w.astype(np.float64) @ stats
    return out


def percentile_interval(values: np.ndarray, *, level: float, n_boot: int, seed: int) -> Interval:
    """Percentile interval of replicate values, NaN replicates left out."""
    v = np.asarray(values, dtype=np.float64)
    v = v[~np.isnan(v)]
    if v.size == 0:
        return Interval(float("nan"), float("nan"), level, n_boot, seed)
    tail = (1.0 - level) / 2.0 * 100.0
    lo, hi = np.percentile(v, [tail, 100.0 - tail])
    return Interval(float(lo), float(hi), level, n_boot, seed)


def bootstrap_intervals(stats: np.ndarray, finishes: Sequence[Callable[[np.ndarray], np.ndarray]],
                        columns: Sequence[slice], *, n_boot: int = 1000, seed: int = 0,
                        level: float = 0.95, row_keys: np.ndarray | None = None
                        ) -> list[Interval]:
    r"""Percentile bootstrap intervals for several statistics sharing the same clip resamples.

    Parameters
    ----------
    stats : ndarray, shape (units, K)
        Per-unit statistics of all the measures side by side.
    finishes : sequence of callables
        ``finishes[i](sums[..., columns[i]])`` gives measure i from column sums.
    columns : sequence of slice
        Which columns of ``stats`` each measure uses.
    n_boot, seed, level :
        Number of resamples, seed of ``numpy.random.default_rng``, interval coverage.
    row_keys : ndarray of int, optional
        Equal exactly for units with equal statistics (speeds up; see :func:`replicate_sums`).

    Notes
    -----
    Replicate b draws units :math:`u^*_1..u^*_U` uniformly with replacement; with counts
    :math:`w_{bu}` the replicate sums are :math:`S_b = \sum_u w_{bu} s_u`, and the interval is
    the :math:`(1-\ell)/2` and :math:`(1+\ell)/2` quantiles of the replicate values.

    Efron, B. & Tibshirani, R.J. (1993). An Introduction to the Bootstrap. Chapman & Hall,
    ch. 13 (percentile intervals). https://doi.org/10.1007/978-1-4899-4541-9
    """
    level = _checks.probability("level", level)
    sums = replicate_sums(np.asarray(stats, dtype=np.float64), n_boot=n_boot, seed=seed,
                          row_keys=row_keys)
    return [percentile_interval(f(sums[:, c]), level=level, n_boot=n_boot, seed=seed)
            for f, c in zip(finishes, columns)]
