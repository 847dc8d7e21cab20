"""The work columns of the edit history kept between runs (project/work_log.py), and
throughput and the trend computed from them with numpy (project/worktime.py): brought up to
date by reading only the edits made since, read again whole when they no longer match the
history, and the same numbers as a plain loop over the history's rows."""

from __future__ import annotations

import datetime as dt
import json
import math
import sqlite3

import numpy as np
import pytest

from clipscribe import Project
from clipscribe.agreement import krippendorff_alpha
from clipscribe.project import work_log
from clipscribe.project.work_log import KEPT_AS, WorkEvents
from clipscribe.project.worktime import iso_weeks

START = dt.datetime(2026, 3, 2, 9, 0, tzinfo=dt.timezone.utc)


def _at(seconds, step):
    with Project.simulated_clock(lambda: START + dt.timedelta(seconds=seconds)):
        step()


@pytest.fixture
def small(tmp_path, make_video):
    """Three clips; ann-a labels clip 1 at 0 s and clip 2 at 100 s, ann-b clip 1 at 0 s."""
    folder = tmp_path / "p"
    with Project.create(folder, user="lead") as p:
        p.define_labels(["stack", "sort"])
        for name in ("ann-a", "ann-b"):
            p.add_annotator(name)
        for i in range(3):
            make_video(p.media_root / f"c{i}.mp4", seed=i)
        p.add_media(p.media_root)
        _at(0, lambda: p.set_clip_label(1, "ann-a", "stack"))
        _at(100, lambda: p.set_clip_label(2, "ann-a", "sort"))
        _at(0, lambda: p.set_clip_label(1, "ann-b", "stack"))
    return folder


@pytest.fixture
def reads(monkeypatch):
    """The edit id after which each read of the history started."""
    seen: list[int] = []
    real = work_log._read_after

    def spy(s, edit):
        seen.append(edit)
        return real(s, edit)
    monkeypatch.setattr(work_log, "_read_after", spy)
    return seen


def test_kept_columns_are_brought_up_to_date_after_one_new_label(small, reads):
    with Project.open(small, user="lead") as p:
        assert p.throughput()["ann-b"].active_seconds == 0
        assert reads == [0]                      # nothing kept yet: the whole history
        p.throughput()
        assert reads == [0]                      # nothing written since: nothing read
    with Project.open(small, user="lead") as p:  # a new run: the kept columns, then one label
        _at(30, lambda: p.set_clip_label(2, "ann-b", "sort"))
        got = p.throughput()
    assert len(reads) == 2 and reads[1] > 0      # read from the kept newest edit on
    # worked out by hand: ann-b labelled clip 1 at 0 s and clip 2 at 30 s
    assert (got["ann-b"].clips, got["ann-b"].edits, got["ann-b"].active_seconds) == (2, 2, 30)
    assert got["ann-b"].clips_per_hour == 240
    assert (got["ann-a"].clips, got["ann-a"].active_seconds) == (2, 100)


def test_columns_that_no_longer_match_the_history_are_read_again(small, reads):
    with Project.open(small, user="lead") as p:
        p.throughput()
    with Project.open(small, user="lead") as p:
        results = _results(p)
        kept = results.kept(KEPT_AS)
        assert isinstance(kept, WorkEvents) and len(kept.clip) == 3
        # as if a transaction had committed an older edit id after these columns were read
        results.keep(KEPT_AS, WorkEvents(kept.at_us[:2], kept.owner[:2], kept.who[:2],
                                         kept.clip[:2], kept.upto, kept.seen - 1))
        got = p.throughput()
    assert reads[-1] == 0                         # read whole again, not from the kept id
    assert (got["ann-a"].edits, got["ann-a"].active_seconds, got["ann-b"].edits) == (2, 100, 1)


def _results(p):
    """The project's result cache service."""
    return p._peers.results


def _plain_loop(folder, idle=300.0):
    """The reference: throughput and the (clips, first, last, alpha) of the trend by a plain
    Python loop over the history rows read with SQLite's own JSON functions."""
    db = sqlite3.connect(folder / "project.sqlite")
    ids = dict(db.execute("SELECT id, name FROM annotators WHERE role != 'lead'"))
    rows = db.execute(
        "SELECT at, coalesce(json_extract(after, '$.annotator_id'), "
        "json_extract(before, '$.annotator_id')), annotator_id, clip_id FROM edits WHERE "
        "entity IN ('clip_label', 'segment', 'caption', 'assignment') AND clip_id IS NOT NULL "
        "ORDER BY id").fetchall()
    events = []
    for at, owner, who, clip in rows:
        name = ids.get(owner) if owner in ids else ids.get(who)
        if name is not None:
            events.append((dt.datetime.fromisoformat(at), name, clip))
    through = {}
    for name in sorted(ids.values()):
        ev = sorted((t, c) for t, n, c in events if n == name)
        active = sum(min((b[0] - a[0]).total_seconds(), idle) for a, b in zip(ev, ev[1:]))
        through[name] = (len({c for _, c in ev}), len(ev), active)
    when: dict[int, dt.datetime] = {}
    for t, _, c in events:
        when[c] = max(when.get(c, t), t)
    return through, when


def _trend_by_loop(p, when, size):
    workers = {a.name for a in p.annotators() if a.role != "lead"}
    rows = [r for r in p.clip_labels() if r[1] in workers]
    order = sorted({c for c, _, _ in rows}, key=lambda c: (when.get(c, dt.datetime.min), c))
    names = sorted({a for _, a, _ in rows})
    cell = {(c, a): lab for c, a, lab in rows}
    labels = [l.name for l in p.labels()]
    out = []
    for k in range(0, len(order), size):
        part = order[k:k + size]
        alpha = float(krippendorff_alpha([[cell.get((c, a)) for c in part] for a in names],
                                         labels=labels))
        times = [when[c] for c in part]
        out.append((part, min(times), max(times), alpha))
    return out


def test_numpy_throughput_and_trend_equal_a_plain_loop(sample_copy, sample_lead):
    through, when = _plain_loop(sample_copy)
    with Project.open(sample_copy, user=sample_lead) as p:
        got = p.throughput()
        assert {n: (t.clips, t.edits, t.active_seconds) for n, t in got.items()} == through
        for size in (4, 5):
            trend = p.agreement_trend(window=size, by="clips")
            ref = _trend_by_loop(p, when, size)
            assert [(t.clips, t.first, t.last) for t in trend] == [r[:3] for r in ref]
            assert all(math.isclose(t.alpha, r[3], abs_tol=0) or (math.isnan(t.alpha)
                       and math.isnan(r[3])) for t, r in zip(trend, ref))


@pytest.mark.parametrize("day, week", [
    # Python's date.isocalendar (ISO 8601 weeks) gives the same for every one of these
    ("2026-12-04", "2026-W49"), ("2026-12-31", "2026-W53"), ("2021-01-03", "2020-W53"),
    ("2024-12-30", "2025-W01"), ("2025-12-29", "2026-W01"), ("1970-01-01", "1970-W01"),
    ("1969-12-28", "1969-W52")])
def test_iso_week_of_a_utc_time(day, week):
    t = dt.datetime.fromisoformat(day) + dt.timedelta(hours=23, minutes=59)
    us = np.array([(t - dt.datetime(1970, 1, 1)) // dt.timedelta(microseconds=1)])
    assert iso_weeks(us) == [week]
    year, n, _ = t.isocalendar()
    assert week == f"{year}-W{n:02d}"


def test_iso_weeks_agree_with_python_over_years():
    days = np.arange(-800, 25_000, 3, dtype=np.int64)     # 1967 to 2038, every third day
    us = days * 86_400_000_000 + 3_600_000_000
    ref = []
    for d in days.tolist():
        year, n, _ = (dt.date(1970, 1, 1) + dt.timedelta(days=d)).isocalendar()
        ref.append(f"{year}-W{n:02d}")
    assert iso_weeks(us) == ref


def test_kept_entry_is_json_free_columns(small):
    """The entry holds numpy columns (no rows, no names): people renamed later are named
    from the current list of people."""
    with Project.open(small, user="lead") as p:
        p.throughput()
        kept = _results(p).kept(KEPT_AS)
    assert all(isinstance(c, np.ndarray) and c.dtype == np.int64
               for c in (kept.at_us, kept.owner, kept.who, kept.clip))
    assert json.dumps(kept.clip.tolist()) == "[1, 2, 1]"


def test_kept_clip_labels_follow_every_change(small):
    """The clip labels read for the trend are reused by the agreement report only while
    nothing moved: a label set through the façade, and a row rewritten outside it with its
    version bumped (as the bulk import does), are both seen."""
    with Project.open(small, user="lead") as p:
        first = p.clip_labels()
        assert p.clip_labels() == first and (2, "ann-a", "sort") in first
        p.set_clip_label(2, "ann-a", "stack")
        assert (2, "ann-a", "stack") in p.clip_labels()
        db = sqlite3.connect(small / "project.sqlite")
        sort = db.execute("SELECT id FROM labels WHERE name = 'sort'").fetchone()[0]
        db.execute("UPDATE clip_labels SET label_id = ?, version = version + 1 WHERE clip_id = 1"
                   " AND annotator_id = (SELECT id FROM annotators WHERE name = 'ann-b')", (sort,))
        db.commit()
        db.close()
        assert (1, "ann-b", "sort") in p.clip_labels()


def test_label_table_codes_and_the_names_fallback():
    """Labels as their place in the label set (NaN where none); a label outside the set
    keeps the names, so alpha can say which label it does not know."""
    from clipscribe.project.worktime import _cells
    order = np.array([7, 3, 5])
    rows = [(3, "b", "sort"), (5, "a", "stack"), (7, "a", "sort"), (7, "b", "sort")]
    table = _cells(order, rows, ["stack", "sort"])
    assert not table.strings
    np.testing.assert_array_equal(table(order), [[1.0, np.nan, 0.0], [1.0, 1.0, np.nan]])
    np.testing.assert_array_equal(table(order[1:]), [[np.nan, 0.0], [1.0, np.nan]])
    odd = _cells(order, rows + [(3, "a", "retired")], ["stack", "sort"])
    assert odd.strings and odd(order) == [["sort", "retired", "stack"], ["sort", "sort", None]]
    with pytest.raises(ValueError, match="retired"):
        krippendorff_alpha(odd(order), labels=["stack", "sort"])
