"""Decoding into the array the cache is about to evict never changes a frame someone holds."""

from __future__ import annotations

import numpy as np

from clipscribe.media import FrameCache, open_video


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
