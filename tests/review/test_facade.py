"""Façade queries of the review desk: who may review, the queue, one clip, throughput, trend."""

import math

import krippendorff
import numpy as np
import pytest

from clipscribe import Project, RecordError
from clipscribe.errors import NotALeadError
from clipscribe.types import IDLE_SECONDS


def test_non_lead_is_refused_by_the_facade(sample):
    folder, _ = sample
    with Project.open(folder, user="annotator-2") as p:
        for call in (p.check_reviewer, p.review_queue, lambda: p.clip_comparison(1),
                     p.most_disputed_clip):
            with pytest.raises(NotALeadError, match="for leads: 'annotator-2' is an annotator"):
                call()
        with pytest.raises(RecordError):  # and the gold writes stay refused too
            p.set_gold_label(1, "stack", lead="annotator-2")


def test_queue_follows_the_agreement_report_and_filters(sample):
    folder, lead = sample
    with Project.open(folder, user=lead) as p:
        rep = p.agreement_report(n_boot=10)
        rows = p.review_queue(report=rep)
        assert [r.clip for r in rows] == [int(c.clip) for c in rep.review_queue()]
        assert rows[0].label_disagreement == max(r.label_disagreement for r in rows)
        assert p.most_disputed_clip() == rows[0].clip
        # the sample's systematic confusion: annotator-2 says "put down" where others say stack
        assert "stack" in rows[0].labels.values() and "put down" in rows[0].labels.values()
        stack = p.review_queue(label="stack", report=rep)
        assert stack and all("stack" in r.labels.values() for r in stack)
        cell = p.review_queue(group="cell-east", report=rep)
        assert cell and {r.group for r in cell} == {"cell-east"}
        three = p.review_queue(annotator="annotator-3", report=rep)
        worked = {c for c, a, _ in p.clip_labels() if a == "annotator-3"}
        worked |= {g.clip for g in p.segments(annotator="annotator-3")}
        assert {r.clip for r in three} == worked and len(three) < len(rows)


def test_clip_comparison_has_everyone_and_no_lead(sample):
    folder, lead = sample
    with Project.open(folder, user=lead) as p:
        clip = p.most_disputed_clip()
        cmp = p.clip_comparison(clip)
        assert lead not in cmp.annotators
        assert cmp.labels == {a: l for c, a, l in p.clip_labels() if c == clip}
        for a, segs in cmp.segments.items():
            assert [(g.start, g.end) for g in segs] == sorted(
                (g.start, g.end) for g in p.segments(clip=clip, annotator=a))
        assert sum(map(len, cmp.captions.values())) == len(p.captions(clip=clip))
        assert cmp.gold_label is None and cmp.gold_segments == [] and cmp.gold_captions == []


def test_throughput_of_a_history_with_known_times(tmp_path, make_video):
    """Edits at chosen times, worked out by hand from the documented rule (pauses longer than
    IDLE_SECONDS = 300 s count as 300 s): ann-a edits clip 1 at 0 s and 40 s, clip 2 at 100 s
    and clip 3 an hour later, so 3 clips in 40 + 60 + 300 = 400 s, 27 clips per hour; ann-b
    edits clip 1 at 0 s and clip 2 at 30 s: 2 clips in 30 s, 240 per hour; ann-c did nothing."""
    import datetime as dt
    start = dt.datetime(2026, 3, 2, 9, 0, tzinfo=dt.timezone.utc)
    with Project.create(tmp_path / "p", user="lead") as p:
        p.define_labels(["stack", "sort"])
        for name in ("ann-a", "ann-b", "ann-c"):
            p.add_annotator(name)
        for i in range(3):
            make_video(p.media_root / f"c{i}.mp4", seed=i)
        p.add_media(p.media_root)
        steps = [(0, lambda: p.set_clip_label(1, "ann-a", "stack")),
                 (40, lambda: p.add_caption(1, "ann-a", "Two blocks are stacked.")),
                 (100, lambda: p.set_clip_label(2, "ann-a", "sort")),
                 (3700, lambda: p.set_clip_label(3, "ann-a", "sort")),
                 (0, lambda: p.set_clip_label(1, "ann-b", "stack")),
                 (30, lambda: p.set_clip_label(2, "ann-b", "stack"))]
        for seconds, step in steps:
            with Project.simulated_clock(lambda s=seconds: start + dt.timedelta(seconds=s)):
                step()
        got = p.throughput()
    assert IDLE_SECONDS == 300
    assert (got["ann-a"].clips, got["ann-a"].active_seconds, got["ann-a"].clips_per_hour) == (3, 400, 27)
    assert (got["ann-b"].clips, got["ann-b"].active_seconds, got["ann-b"].clips_per_hour) == (2, 30, 240)
    assert got["ann-c"].clips == 0 and math.isnan(got["ann-c"].clips_per_hour)
    assert got["ann-a"].recipe.metric == "throughput"


def test_trend_windows_agree_with_the_krippendorff_package(sample):
    folder, lead = sample
    with Project.open(folder, user=lead) as p:
        trend = p.agreement_trend(window=4)
        labels = [l.name for l in p.labels()]
        cell = {(c, a): l for c, a, l in p.clip_labels()}
        names = sorted({a for _, a, _ in p.clip_labels()})
        assert sum(len(t.clips) for t in trend) == 12 and all(len(t.clips) == 4 for t in trend)
        for t in trend:
            data = np.array([[labels.index(cell[(c, a)]) if (c, a) in cell else np.nan
                              for c in t.clips] for a in names], dtype=float)
            if np.unique(data[~np.isnan(data)]).size < 2:
                assert t.alpha == 1.0  # documented 0/0 choice of our alpha
                continue
            # reference: the krippendorff package (test-only dependency)
            ref = krippendorff.alpha(reliability_data=data, level_of_measurement="nominal")
            assert math.isclose(t.alpha, ref, abs_tol=1e-9)


def _spread_over_weeks(folder, weeks):
    """Move every edit of clip c into the week ``weeks[c]`` (a Monday, 09:00 UTC, plus c minutes)."""
    import datetime as dt
    import sqlite3
    db = sqlite3.connect(folder / "project.sqlite")
    for clip, monday in weeks.items():
        at = dt.datetime.combine(monday, dt.time(9, 0)) + dt.timedelta(minutes=clip)
        db.execute("UPDATE edits SET at = ? WHERE clip_id = ?", (at.isoformat(" "), clip))
    db.commit()
    db.close()


def test_trend_by_iso_week_once_labels_span_three_weeks(sample):
    import datetime as dt
    folder, lead = sample
    mondays = [dt.date(2026, 11, 2) + dt.timedelta(weeks=k) for k in range(4)]   # W45..W48
    with Project.open(folder, user=lead) as p:
        clips = sorted(c.id for c in p.clips())
    _spread_over_weeks(folder, {c: mondays[i % 4] for i, c in enumerate(clips)})
    with Project.open(folder, user=lead) as p:
        trend = p.agreement_trend()                                   # auto: 4 weeks, so by week
        assert [t.period for t in trend] == ["2026-W45", "2026-W46", "2026-W47", "2026-W48"]
        assert [t.clips for t in trend] == [[c for i, c in enumerate(clips) if i % 4 == k]
                                            for k in range(4)]
        assert all("ISO week" in t.recipe.text() for t in trend)
        labels = [l.name for l in p.labels()]
        cell = {(c, a): l for c, a, l in p.clip_labels()}
        names = sorted({a for _, a, _ in p.clip_labels()})
        for t in trend:
            data = np.array([[labels.index(cell[(c, a)]) if (c, a) in cell else np.nan
                              for c in t.clips] for a in names], dtype=float)
            if np.unique(data[~np.isnan(data)]).size < 2:
                assert t.alpha == 1.0
                continue
            # reference: the krippendorff package (test-only dependency)
            ref = krippendorff.alpha(reliability_data=data, level_of_measurement="nominal")
            assert math.isclose(t.alpha, ref, abs_tol=1e-9)
        assert all(t.period == "" for t in p.agreement_trend(by="clips"))
        assert all(t.period == "" for t in p.agreement_trend(window=4))  # a window asks for clips
        with pytest.raises(RecordError, match="use auto, clips or week"):
            p.agreement_trend(by="month")


def test_trend_stays_by_clips_within_fewer_weeks(sample):
    folder, lead = sample
    with Project.open(folder, user=lead) as p:            # the sample's work fits in one morning
        assert {t.period for t in p.agreement_trend()} == {""}
        assert len({t.period for t in p.agreement_trend(by="week")}) == 1
