"""Clip features from files: sampling plan, motion direction, cache, progress, cancel, bad media."""

from __future__ import annotations

import threading

import numpy as np
import pytest

from clipscribe import features as F
from clipscribe.features import extract
from clipscribe.media import JobCancelled, MediaError

from .synth import sliding_clip

SMALL = F.FeatureRecipe(snippets=4, pairs=2, height=64)


@pytest.mark.parametrize("n, k, pairs", [(100, 8, 4), (24, 4, 2), (7, 8, 4), (3, 2, 4), (1, 3, 2)])
def test_snippet_plan_follows_the_segment_centres(n, k, pairs):
    plan = F.snippet_plan(n, k, pairs)
    assert plan.centres == tuple(min(int((j + 0.5) * n / k), n - 1) for j in range(k))
    assert plan.middle == n // 2
    assert plan.pairs == min(pairs, n - 1)
    for c, s in zip(plan.centres, plan.flow_starts):
        assert 0 <= s and s + plan.pairs <= n - 1
        assert s <= c <= s + plan.pairs or plan.pairs == 0
    assert max(plan.wanted) < n


def test_snippet_plan_refuses_an_empty_clip():
    with pytest.raises(ValueError):
        F.snippet_plan(0, 8, 4)


def test_motion_features_tell_the_direction_of_a_sliding_picture(tmp_path):
    right = F.clip_features(sliding_clip(tmp_path / "r.avi", dx=2, dy=0), SMALL, use_cache=False)
    left = F.clip_features(sliding_clip(tmp_path / "l.avi", dx=-2, dy=0), SMALL, use_cache=False)
    down = F.clip_features(sliding_clip(tmp_path / "d.avi", dx=0, dy=2), SMALL, use_cache=False)
    mean_dx, mean_dy = -4, -3  # the flow summary closes the motion vector: dx, dy, speed, share
    # 64 px high from a 64 px clip: the working size is the clip's size
    assert right.motion[mean_dx] == pytest.approx(2.0, abs=0.3)
    assert left.motion[mean_dx] == pytest.approx(-2.0, abs=0.3)
    assert down.motion[mean_dy] == pytest.approx(2.0, abs=0.3)
    assert abs(down.motion[mean_dx]) < 0.3
    assert right.appearance.shape == (F.APPEARANCE_DIMS,)
    assert right.single_frame.shape == (F.APPEARANCE_DIMS,)
    assert right.frame_count == 24


def test_colour_shows_in_appearance_not_in_motion(tmp_path):
    red = F.clip_features(sliding_clip(tmp_path / "a.avi", dx=2, dy=0, colour="red"), SMALL,
                          use_cache=False)
    blue = F.clip_features(sliding_clip(tmp_path / "b.avi", dx=2, dy=0, colour="blue"), SMALL,
                           use_cache=False)
    colour = slice(0, 128)
    assert np.abs(red.appearance[colour] - blue.appearance[colour]).sum() > 1.0
    assert red.motion[-4] == pytest.approx(blue.motion[-4], abs=0.3)


def test_features_are_cached_by_content_and_recipe(tmp_path, monkeypatch):
    clip = sliding_clip(tmp_path / "c.avi", dx=1, dy=1)
    cache = tmp_path / "cache"
    first = F.clip_features(clip, SMALL, cache_dir=cache)
    assert len(list(cache.glob("*.npz"))) == 1
    copy = tmp_path / "copy.avi"
    copy.write_bytes(clip.read_bytes())

    def no_compute(*a, **k):
        raise AssertionError("computed again instead of using the cache")
    monkeypatch.setattr(extract, "compute_clip_features", no_compute)
    again = F.clip_features(copy, SMALL, cache_dir=cache)  # same bytes, other name: a hit
    for name in F.STREAMS:
        np.testing.assert_array_equal(first.stream(name), again.stream(name))
    monkeypatch.undo()
    F.clip_features(clip, F.FeatureRecipe(snippets=3, pairs=2, height=64), cache_dir=cache)
    assert len(list(cache.glob("*.npz"))) == 2  # another recipe: another cache entry


def test_a_damaged_cache_file_is_computed_again(tmp_path):
    clip = sliding_clip(tmp_path / "c.avi", dx=1, dy=0)
    cache = tmp_path / "cache"
    first = F.clip_features(clip, SMALL, cache_dir=cache)
    (entry,) = cache.glob("*.npz")
    entry.write_bytes(b"not numpy")
    again = F.clip_features(clip, SMALL, cache_dir=cache)
    np.testing.assert_array_equal(first.motion, again.motion)


def test_progress_ends_at_the_frame_count(tmp_path):
    seen = []
    F.clip_features(sliding_clip(tmp_path / "p.avi", dx=1, dy=0, frames=40), SMALL,
                    use_cache=False, progress=lambda d, n: seen.append((d, n)))
    assert seen[-1] == (40, 40)
    assert all(d <= n for d, n in seen)


@pytest.mark.parametrize("kind", ["event", "callable"])
def test_cancel_stops_with_job_cancelled(tmp_path, kind):
    clip = sliding_clip(tmp_path / "x.avi", dx=1, dy=0, frames=40)
    ev = threading.Event()
    ev.set()
    with pytest.raises(JobCancelled):
        F.clip_features(clip, SMALL, use_cache=False,
                        cancel=ev if kind == "event" else (lambda: True))


@pytest.mark.parametrize("make, says", [
    (lambda p: p, "not found"),
    (lambda p: (p.write_bytes(b""), p)[1], "empty"),
    (lambda p: (p.write_bytes(b"this is no video" * 64), p)[1], "OpenCV"),
    (lambda p: (p.mkdir(), p)[1], "folder"),
])
def test_bad_media_is_a_media_error(tmp_path, make, says):
    with pytest.raises(MediaError, match=says):
        F.clip_features(make(tmp_path / "bad.avi"), SMALL, cache_dir=tmp_path / "cache")


def test_many_clips_skip_the_bad_ones_and_report_them(tmp_path):
    good = sliding_clip(tmp_path / "g.avi", dx=1, dy=0)
    bad = tmp_path / "bad.avi"
    bad.write_bytes(b"garbage" * 100)
    seen = []
    done, failed = F.features_for(
        [F.FeatureJob("1", good), F.FeatureJob("2", bad), F.FeatureJob("3", tmp_path / "none.avi")],
        SMALL, workers=2, cache_dir=tmp_path / "cache", progress=lambda d, n: seen.append((d, n)))
    assert set(done) == {"1"}
    assert set(failed) == {"2", "3"} and "bad.avi" in failed["2"]
    assert seen[-1] == (3, 3)


def test_many_clips_stop_when_cancelled(tmp_path):
    good = sliding_clip(tmp_path / "g.avi", dx=1, dy=0)
    with pytest.raises(JobCancelled):
        F.features_for([F.FeatureJob(str(i), good) for i in range(3)], SMALL,
                       cancel=lambda: True, cache_dir=tmp_path / "cache")
