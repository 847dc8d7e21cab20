"""Turn ratings (any hashable labels, None/NaN for missing) into integer codes."""

from __future__ import annotations

from typing import Any, Sequence

import numpy as np

from ._checks import is_missing


def category_order(values: Sequence[Any], labels: Sequence[Any] | None) -> list:
    """The category list: ``labels`` as given, else the sorted distinct non-missing values.

    Values of mixed, unorderable types fall back to first-seen order.
    """
    if labels is not None:
        out = list(labels)
        if len(set(out)) != len(out):
            raise ValueError("labels must not repeat a category")
        return out
    seen = list(dict.fromkeys(v for v in values if not is_missing(v)))
    try:
        return sorted(seen)
    except TypeError:
        return seen


def encode(values: Sequence[Any], cats: Sequence[Any], *, name: str = "ratings") -> np.ndarray:
    """Codes 0..V-1 by position in ``cats``; -1 for missing. Unknown values raise ValueError."""
    index = {c: i for i, c in enumerate(cats)}
    out = np.empty(len(values), dtype=np.int64)
    for i, v in enumerate(values):
        if is_missing(v):
            out[i] = -1
            continue
        try:
            out[i] = index[v]
        except (KeyError, TypeError):
            raise ValueError(f"{name}[{i}]={v!r} is not among the declared labels") from None
    return out


def encode_matrix(data: np.ndarray, labels: Sequence[Any] | None) -> tuple[np.ndarray, list]:
    """raters x units array of ratings -> (int codes with -1 missing, categories)."""
    if data.dtype.kind in "fiub":
        vals = data.astype(np.float64)
        mask = ~np.isnan(vals)
        if labels is None:
            fast = _small_whole_codes(vals, mask)
            if fast is not None:
                return fast
        cats = list(np.unique(vals[mask])) if labels is None else list(labels)
        cat_arr = np.asarray(cats, dtype=np.float64)
        if labels is not None and len(set(cats)) != len(cats):
            raise ValueError("labels must not repeat a category")
        codes = np.full(vals.shape, -1, dtype=np.int64)
        if len(cat_arr):
            order = np.argsort(cat_arr, kind="stable")
            pos = np.searchsorted(cat_arr[order], vals[mask])
            pos = np.minimum(pos, len(cat_arr) - 1)
            found = cat_arr[order][pos] == vals[mask]
            if not np.all(found):
                bad = vals[mask][~found][0]
                raise ValueError(f"data holds {bad!r}, which is not among the declared labels")
            codes[mask] = order[pos]
        elif mask.any():
            raise ValueError("data holds values but labels is empty")
        return codes, [float(c) if isinstance(c, np.floating) else c for c in cats]
    flat = data.ravel().tolist()
    cats = category_order(flat, labels)
    return encode(flat, cats, name="data").reshape(data.shape), cats


def _small_whole_codes(vals: np.ndarray, mask: np.ndarray):
    """Codes for ratings that are whole numbers in [0, 2^20): one counting pass, no sort."""
    v = vals[mask]
    if v.size == 0 or v.min() < 0 or v.max() >= 1 << 20 or not np.all(v == np.floor(v)):
        return None
    iv = v.astype(np.int64)
    present = np.bincount(iv) > 0
    lookup = np.cumsum(present) - 1
    codes = np.full(vals.shape, -1, dtype=np.int64)
    codes[mask] = lookup[iv]
    return codes, [float(c) for c in np.flatnonzero(present)]
