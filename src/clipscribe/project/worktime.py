"""Throughput and the agreement trend computed over the work columns of the edit history
(:class:`~clipscribe.project.work_log.WorkEvents`) with numpy: a big project has over a
million annotation edits, and a Python loop over them cost the board seconds. The sums are
taken in the same order as a plain loop would (a running sum, not numpy's pairwise one), so
the numbers are the same to the last bit."""

from __future__ import annotations

import datetime as dt
import math

import numpy as np

from ..agreement import krippendorff_alpha
from ..agreement._recipe import Recipe
from ..types import Throughput, TrendPoint
from .work_log import WorkEvents

_DAY_US = 86_400_000_000


def throughput(at_us: np.ndarray, person: np.ndarray, clip: np.ndarray, names: list[str],
               idle_seconds: float) -> dict[str, Throughput]:
    """:meth:`~clipscribe.project.review.Review.throughput` over credited work columns."""
    out = {}
    for k, name in enumerate(names):
        mine = person == k
        t = np.sort(at_us[mine])
        gaps = np.minimum(np.diff(t) / 1e6, idle_seconds)
        # a running sum adds left to right as sum() over the gaps would (np.sum pairs them)
        active = float(np.cumsum(gaps)[-1]) if len(gaps) else 0.0
        n = int(np.unique(clip[mine]).size)
        rate = 3600.0 * n / active if active > 0 else math.nan
        rec = Recipe.make("throughput", "clips-per-hour", idle_cap_s=idle_seconds,
                          n_raters=1, n_items=n, annotators=[name],
                          note=None if active > 0 else "no working time measured")
        out[name] = Throughput(name, n, int(mine.sum()), active, rate, rec)
    return out


def last_work(at_us: np.ndarray, clip: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(clips, when each was last worked on): the newest time per clip."""
    if not len(clip):
        return clip[:0], at_us[:0]
    by = np.lexsort((at_us, clip))
    c, t = clip[by], at_us[by]
    last = np.r_[c[1:] != c[:-1], True]
    return c[last], t[last]


def iso_weeks(at_us: np.ndarray) -> list[str]:
    """ISO 8601 calendar week ("2026-W49") of UTC times: the week belongs to the year of its
    Thursday, and is numbered from the week holding that year's first Thursday."""
    days = at_us // _DAY_US                       # days since Thursday 1970-01-01
    thursday = days - (days + 3) % 7 + 3          # (days + 3) % 7: 0 on Mondays
    year = thursday.astype("datetime64[D]").astype("datetime64[Y]")
    week = (thursday - year.astype("datetime64[D]").astype(np.int64)) // 7 + 1
    years = year.astype(np.int64) + 1970
    return [f"{y}-W{w:02d}" for y, w in zip(years.tolist(), week.tolist())]


def trend(events: WorkEvents, at_us: np.ndarray, clip: np.ndarray,
          rows: list[tuple[int, str, str]], labels: list[str], *, window: int | None,
          by: str, min_weeks: int) -> list[TrendPoint]:
    """:meth:`~clipscribe.project.review.Review.agreement_trend` over credited work columns
    (``at_us``, ``clip``) and the workers' clip labels ``rows``."""
    worked, last = last_work(at_us, clip)
    labelled = np.unique(np.fromiter((c for c, _, _ in rows), dtype=np.int64, count=len(rows)))
    if not len(labelled):
        return []
    at = np.minimum(np.searchsorted(worked, labelled), max(len(worked) - 1, 0))
    dated = (worked[at] == labelled) if len(worked) else np.zeros(len(labelled), bool)
    when = np.where(dated, last[at] if len(worked) else 0, np.iinfo(np.int64).min)
    by_time = np.lexsort((labelled, when))    # undated clips first, as the oldest
    order, when, dated = labelled[by_time], when[by_time], dated[by_time]
    weeks = _weeks(order[dated], when[dated])
    if by == "week" or (by == "auto" and window is None and len(weeks) >= min_weeks):
        parts, how = weeks, "ISO week (UTC) of the last label"
    else:
        size = window or max(3, math.ceil(len(order) / 6))
        parts = [("", order[k:k + size]) for k in range(0, len(order), size)]
        how = f"windows of {size} clips by time of last label"
    cells = _cells(order, rows, labels)
    times = dict(zip(order[dated].tolist(), when[dated].tolist()))
    out = []
    for period, part in parts:
        ids = part.tolist()
        val = krippendorff_alpha(cells(part), labels=labels if cells.strings else
                                 [float(k) for k in range(len(labels))])
        span = [times[c] for c in ids if c in times]
        first, last_t = ((events.when(min(span)), events.when(max(span))) if span
                         else (dt.datetime.min, dt.datetime.min))
        rec = val.recipe.replace(options={**dict(val.recipe.options), "trend": how})
        out.append(TrendPoint(len(out) + 1, first, last_t, ids, float(val), rec, period))
    return out


def _weeks(order: np.ndarray, when: np.ndarray) -> list[tuple[str, np.ndarray]]:
    """Clips (in time order) grouped by the ISO week of their last label, oldest first."""
    names = iso_weeks(when)
    starts = [k for k in range(len(names)) if k == 0 or names[k] != names[k - 1]]
    return [(names[a], order[a:b]) for a, b in zip(starts, starts[1:] + [len(names)])]


class _cells:
    """The raters x clips table of the workers' labels for a part of ``order``: label codes
    (their place in ``labels``, NaN where a worker gave none), which alpha reads as numbers,
    not one string at a time (nominal alpha depends on which codes agree, not on the names).
    A label outside ``labels`` keeps the table of names, so alpha says which one."""

    def __init__(self, order: np.ndarray, rows: list[tuple[int, str, str]],
                 labels: list[str]) -> None:
        names = sorted({a for _, a, _ in rows})
        self.at = np.zeros(int(order.max()) + 1, dtype=np.int64)
        self.at[order] = np.arange(len(order))
        code = {lab: float(k) for k, lab in enumerate(labels)}
        self.strings = any(lab not in code for _, _, lab in rows)
        table = np.full((len(names), len(order)), None if self.strings else np.nan,
                        dtype=object if self.strings else np.float64)
        who = {a: k for k, a in enumerate(names)}
        clips = self.at[np.fromiter((c for c, _, _ in rows), dtype=np.int64, count=len(rows))]
        people = np.fromiter((who[a] for _, a, _ in rows), dtype=np.int64, count=len(rows))
        table[people, clips] = ([lab for _, _, lab in rows] if self.strings else
                                np.fromiter((code[lab] for _, _, lab in rows), dtype=np.float64,
                                            count=len(rows)))
        self.table = table

    def __call__(self, part: np.ndarray) -> list | np.ndarray:
        cols = self.table[:, self.at[part]]
        return cols.tolist() if self.strings else cols
