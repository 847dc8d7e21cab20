"""Parameter checks, declared once and shared by every public function of the package.

Each check raises ``ValueError`` with a message naming the parameter and the bad value.
"""

from __future__ import annotations

import math
from typing import Any, Iterable

import numpy as np

WEIGHTS = (None, "linear", "quadratic")
LEVELS = ("nominal", "ordinal", "interval")
TOKENIZERS = ("13a", "none")
SMOOTHING = (None, "floor", "add-k", "exp")


def choice(name: str, value: Any, allowed: Iterable[Any]) -> Any:
    allowed = tuple(allowed)
    if value not in allowed:
        raise ValueError(f"{name}={value!r} is not one of {', '.join(map(repr, allowed))}")
    return value


def positive_int(name: str, value: Any, *, minimum: int = 1) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < minimum:
        raise ValueError(f"{name} must be an integer >= {minimum}, got {value!r}")
    return int(value)


def probability(name: str, value: Any) -> float:
    v = float(value)
    if not 0.0 < v < 1.0:
        raise ValueError(f"{name} must lie strictly between 0 and 1, got {value!r}")
    return v


def finite_number(name: str, value: Any, *, minimum: float | None = None) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ValueError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(v) or (minimum is not None and v < minimum):
        bound = "" if minimum is None else f" >= {minimum:g}"
        raise ValueError(f"{name} must be a finite number{bound}, got {value!r}")
    return v


def is_missing(x: Any) -> bool:
    """``None`` and float NaN are missing ratings; everything else is a value."""
    return x is None or (isinstance(x, (float, np.floating)) and math.isnan(x))


def rating_pair(a: Any, b: Any) -> tuple[list, list]:
    """Two equally long 1-d sequences of ratings (missing allowed)."""
    la, lb = _as_list("a", a), _as_list("b", b)
    if len(la) != len(lb):
        raise ValueError(f"a and b must have the same length, got {len(la)} and {len(lb)}")
    return la, lb


def _as_list(name: str, x: Any) -> list:
    if isinstance(x, (str, bytes)):
        raise ValueError(f"{name} must be a sequence of ratings, not a string")
    arr = x.tolist() if isinstance(x, np.ndarray) else list(x)
    if isinstance(x, np.ndarray) and x.ndim != 1:
        raise ValueError(f"{name} must be 1-d, got shape {x.shape}")
    return arr


def count_table(table: Any) -> tuple[np.ndarray, int]:
    """items x categories table of non-negative whole counts with the same row sum m >= 2.

    Returns the table as float64 (BLAS does the sums downstream) and m.
    """
    t = np.asarray(table)
    if t.ndim != 2 or t.shape[0] < 1 or t.shape[1] < 1:
        raise ValueError(f"table must be 2-d (items x categories), got shape {t.shape}")
    if t.dtype.kind not in "iuf":
        raise ValueError(f"table must hold counts, got dtype {t.dtype}")
    if t.dtype.kind == "f" and (not np.all(np.isfinite(t)) or np.any(t != np.round(t))):
        raise ValueError("table must hold non-negative whole counts")
    if t.dtype.kind != "u" and t.min() < 0:
        raise ValueError("table must hold non-negative whole counts")
    t = np.ascontiguousarray(t, dtype=np.float64)
    rows = t @ np.ones(t.shape[1])
    lo, hi = rows.min(), rows.max()
    if lo != hi:
        raise ValueError("every row of table must have the same number of ratings "
                         f"(fixed raters per item), got row sums from {lo:g} to {hi:g}")
    if lo < 2:
        raise ValueError(f"each item needs at least 2 ratings, got {lo:g}")
    return t, int(lo)


def reliability_data(data: Any) -> np.ndarray:
    """raters x units matrix; returns an object or float array (shape checked, values not)."""
    if isinstance(data, np.ndarray):
        arr = data
    else:
        rows = [list(r) for r in data]
        if rows and len({len(r) for r in rows}) != 1:
            raise ValueError("data must be raters x units: every row needs the same length")
        arr = np.empty((len(rows), len(rows[0]) if rows else 0), dtype=object)
        for i, r in enumerate(rows):
            arr[i, :] = r
    if arr.ndim != 2:
        raise ValueError(f"data must be 2-d (raters x units), got shape {arr.shape}")
    if arr.shape[0] < 2:
        raise ValueError(f"data needs at least 2 raters (rows), got {arr.shape[0]}")
    return arr


def hypotheses_references(hyps: Any, refs: Any) -> tuple[list[str], list[list[str]]]:
    if isinstance(hyps, str):
        raise ValueError("hypotheses must be a sequence of strings, not one string")
    hl = list(hyps)
    rl = [list(r) if not isinstance(r, str) else [r] for r in refs]
    if len(hl) != len(rl):
        raise ValueError(f"need one list of references per hypothesis: {len(hl)} hypotheses, "
                         f"{len(rl)} reference lists")
    for i, h in enumerate(hl):
        if not isinstance(h, str):
            raise ValueError(f"hypotheses[{i}] must be a string, got {type(h).__name__}")
    for i, r in enumerate(rl):
        for j, x in enumerate(r):
            if x is not None and not isinstance(x, str):
                raise ValueError(f"references[{i}][{j}] must be a string, got {type(x).__name__}")
    return hl, [[x for x in r if x is not None] for r in rl]
