"""Decoding into the array the cache is about to evict never changes a frame someone holds."""

from __future__ import annotations

import numpy as np

from clipscribe.media import FrameCache, open_video
from clipscribe.media.cache import SPARE_POOL, _SparePool


def test_spare_is_the_lru_frame_only_when_nobody_holds_it():
    c = FrameCache(budget=2 * 300)
    c.put(0, np.zeros((10, 10, 3), np.uint8))
    assert c.spare((10, 10, 3)) is None  # room left: nothing to give up
    held = np.ones((10, 10, 3), np.uint8)
    c.put(1, held)
    c.put(2, np.full((10, 10, 3), 2, np.uint8))  # evicts 0
    assert 0 not in c
    assert c.spare((10, 10, 3)) is None  # frame 1 is the next victim, and the test holds it
    del held
    spare = c.spare((10, 10, 3))
    assert spare is not None and spare.flags.writeable and 1 not in c
    assert c.nbytes == 300
    assert c.spare((5, 5, 3)) is None  # another shape is never handed out


def test_held_frames_stay_intact_while_stepping(make_clip, reference, index_dir):
    name = "h264-bframes.mp4"
    ref = reference(name)
    budget = 3 * ref[0].nbytes
    with open_video(make_clip(name), cache_bytes=budget, index_cache_dir=index_dir) as v:
        v.wait_index(30)
        held = {i: v.frame(i) for i in (0, 1)}
        view = v.frame(2)[:, :10]  # a view holds its frame too
        for i in range(3, len(ref)):
            assert np.array_equal(v.frame(i), ref[i])
        assert all(np.array_equal(f, ref[i]) for i, f in held.items())
        assert np.array_equal(view, ref[2][:, :10])


def test_frames_handed_out_after_a_forward_run_stay_intact(make_clip, reference, index_dir):
    """Past the first frames every step decodes into a recycled array; a frame returned then
    must not change while it is held, nor while it stays cached after it was let go."""
    name = "h264-bframes.mp4"
    ref = reference(name)
    budget = 4 * ref[0].nbytes
    with open_video(make_clip(name), cache_bytes=budget, index_cache_dir=index_dir) as v:
        v.wait_index(30)
        for i in range(20):  # the cache is full and recycling from here on
            v.frame(i)
        held = v.frame(20)
        assert v.frame(20) is held  # served from the cache, not decoded again
        dropped_id = id(v.frame(21))  # handed out, then let go while still cached
        for i in range(22, 24):
            assert np.array_equal(v.frame(i), ref[i])
        again = v.frame(21)
        assert id(again) == dropped_id and np.array_equal(again, ref[21])
        del again
        for i in range(24, 60):
            assert np.array_equal(v.frame(i), ref[i])
        assert np.array_equal(held, ref[20])
        assert not held.flags.writeable


def test_cleared_frames_are_reused_only_when_nobody_holds_them():
    SPARE_POOL.clear()
    c = FrameCache(budget=3 * 300)
    kept = np.ones((10, 10, 3), np.uint8)
    c.put(0, kept)
    c.put(1, np.full((10, 10, 3), 7, np.uint8))
    c.clear()
    fresh = FrameCache(budget=3 * 300)
    reused = fresh.spare((10, 10, 3))  # room in the new cache: taken from the pool
    assert reused is not None and reused is not kept and reused.flags.writeable
    assert reused[0, 0, 0] == 7
    assert fresh.spare((10, 10, 3)) is None  # the held frame never reached the pool
    assert fresh.spare((4, 4, 3)) is None
    assert np.all(kept == 1)
    full = FrameCache(budget=0)  # a cache that keeps nothing takes nothing from the pool
    fresh.put(0, reused)
    del reused
    fresh.clear()
    assert full.spare((10, 10, 3)) is None
    SPARE_POOL.clear()


def test_pool_keeps_the_newest_frames_within_its_budget():
    pool = _SparePool(budget=2 * 300)
    pool.give([np.zeros((10, 10, 3), np.uint8), np.zeros((10, 10, 3), np.uint8)])
    pool.give([np.zeros((5, 20, 3), np.uint8)])  # a clip of another size closed last
    assert pool.take((5, 20, 3)) is not None
    assert pool.take((10, 10, 3)) is not None
    assert pool.take((10, 10, 3)) is None  # the oldest one made room


def test_warming_readies_a_full_cache_that_the_first_steps_then_use(make_clip, reference, index_dir):
    name = "h264-bframes.mp4"
    ref = reference(name)
    shape, size = ref[0].shape, ref[0].nbytes
    SPARE_POOL.clear()
    with open_video(make_clip(name), cache_bytes=4 * size, index_cache_dir=index_dir) as v:
        calls = 1
        while v.warm_cache(most=1):
            calls += 1
        assert calls == 3 and not v.warm_cache()          # one frame per call, then done
        pooled = [a for a in SPARE_POOL._arrays if a.shape == shape]
        assert len(pooled) == 3                             # frame 0 is cached at open
        pooled_ids = {id(a) for a in pooled}
        del pooled
        # the next three steps take the pooled arrays: nothing is allocated afresh
        got = [v.frame(i) for i in range(1, 4)]
        assert {id(a) for a in got} == pooled_ids
        assert all(np.array_equal(f, ref[i]) for i, f in enumerate(got, 1))
        assert not [a for a in SPARE_POOL._arrays if a.shape == shape]
        assert not v.warm_cache()                           # a full cache wants nothing more
        assert not [a for a in SPARE_POOL._arrays if a.shape == shape]
    SPARE_POOL.clear()


def test_warming_never_readies_more_than_the_clip_holds(make_clip, reference, index_dir):
    name = "h264-bframes.mp4"
    ref = reference(name)
    SPARE_POOL.clear()
    with open_video(make_clip(name), cache_bytes=10 * len(ref) * ref[0].nbytes,
                    index_cache_dir=index_dir) as v:
        assert not v.warm_cache()
        # every frame but the one cached at open
        assert len([a for a in SPARE_POOL._arrays if a.shape == ref[0].shape]) == len(ref) - 1
    SPARE_POOL.clear()


def test_top_up_keeps_to_the_pool_budget():
    pool = _SparePool(budget=1000)
    assert not pool.top_up((10, 10, 3), 10_000)       # 3 arrays of 300 bytes fit in 1000
    assert len(pool._arrays) == 3 and all(not a.any() for a in pool._arrays)
    assert not pool.top_up((10, 10, 3), 10_000)       # already full: nothing made
    assert len(pool._arrays) == 3
