"""The frame cache stays within its byte budget; the frame index is built once per file."""

from __future__ import annotations

import random

import numpy as np
import pytest

from clipscribe.media import FrameCache, open_video
from clipscribe.media import index as index_module


def _frame(v: int, shape=(10, 10, 3)) -> np.ndarray:
    return np.full(shape, v, dtype=np.uint8)


def test_lru_eviction_order():
    c = FrameCache(budget=3 * 300)
    for k in range(3):
        c.put(k, _frame(k))
    assert c.get(0) is not None  # 0 is now the most recent
    c.put(3, _frame(3))  # evicts 1, the least recently used
    assert 1 not in c and all(k in c for k in (0, 2, 3))
    assert c.nbytes == 900


def test_frame_larger_than_budget_is_not_kept():
    c = FrameCache(budget=100)
    c.put(0, _frame(0))  # 300 bytes
    assert len(c) == 0 and c.nbytes == 0


def test_replacing_a_key_counts_bytes_once():
    c = FrameCache(budget=1000)
    c.put(5, _frame(1))
    c.put(5, _frame(2))
    assert c.nbytes == 300 and int(c.get(5)[0, 0, 0]) == 2


def test_negative_budget_rejected():
    with pytest.raises(ValueError):
        FrameCache(budget=-1)


@pytest.mark.parametrize("frames_in_budget", [0, 1, 7])
def test_video_cache_never_exceeds_budget(frames_in_budget, make_clip, reference, index_dir):
    ref = reference("h264-bframes.mp4")
    budget = frames_in_budget * ref[0].nbytes + ref[0].nbytes // 2
    rng = random.Random(frames_in_budget)
    with open_video(make_clip("h264-bframes.mp4"), cache_bytes=budget,
                    index_cache_dir=index_dir) as v:
        v.wait_index(30)
        assert v.cache.nbytes <= budget
        for _ in range(60):
            i = rng.randrange(len(ref))
            assert np.array_equal(v.frame(i), ref[i])
            assert v.cache.nbytes <= budget
            assert len(v.cache) <= frames_in_budget
        v.prefetch(0, 50)
        v._read_ahead.join(30)
        assert v.cache.nbytes <= budget


def test_cached_frame_is_served_without_decoding(make_clip, index_dir):
    with open_video(make_clip("vp8.webm"), index_cache_dir=index_dir) as v:
        v.wait_index(30)
        a = v.frame(40)
        grabs = v.stats["grabs"]
        assert v.frame(40) is a
        assert v.stats["grabs"] == grabs


def test_index_is_built_once_per_file(make_clip, tmp_path, monkeypatch):
    calls = []
    real = index_module.build_frame_index

    def counting(*args, **kwargs):
        calls.append(args[0])
        return real(*args, **kwargs)

    monkeypatch.setattr(index_module, "build_frame_index", counting)
    folder = tmp_path / "idx"
    path = make_clip("vp9.webm")
    for _ in range(2):
        with open_video(path, index_cache_dir=folder) as v:
            assert v.wait_index(30)
            count = v.frame_count
    assert len(calls) == 1
    assert count == 90
    assert len(list(folder.glob("*.npz"))) == 1


def test_damaged_index_file_is_rebuilt(make_clip, tmp_path):
    folder = tmp_path / "idx"
    path = make_clip("mjpeg.avi")
    with open_video(path, index_cache_dir=folder) as v:
        v.wait_index(30)
    (cached,) = folder.glob("*.npz")
    cached.write_bytes(b"not an index")
    with open_video(path, index_cache_dir=folder) as v:
        assert v.wait_index(30)
        assert v.frame_count == 90
