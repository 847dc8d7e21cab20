"""Frame-exact random access: frame(i) is the i-th frame of a sequential read() loop."""

from __future__ import annotations

import random
import threading

import numpy as np
import pytest

from clipscribe.media import open_video
from clipscribe.media import background_index as background_module
from .clips import read_code
from .conftest import CLIP_SPECS, VFR_CLIPS

ALL_CLIPS = sorted(CLIP_SPECS)


@pytest.mark.parametrize("name", ALL_CLIPS)
def test_random_order_equals_sequential_decode(name, make_clip, reference, index_dir):
    ref = reference(name)
    # The clip itself is sound: the sequential decode carries codes 0, 1, 2, ... in order.
    assert [read_code(f) for f in ref] == list(range(len(ref)))
    with open_video(make_clip(name), index_cache_dir=index_dir) as v:
        assert v.wait_index(30)
        assert v.frame_count == len(ref)
        assert v.size == (ref[0].shape[1], ref[0].shape[0])
        order = list(range(len(ref)))
        random.Random(name).shuffle(order)
        for i in order:
            f = v.frame(i)
            assert f.dtype == np.uint8 and f.shape == ref[i].shape
            assert np.array_equal(f, ref[i]), f"{name}: frame {i} differs from sequential decode"
            assert read_code(f) == i
        # Bigger jumps forced real seeks, not only forward decoding.
        if len(v.index.keyframes) > 1:
            assert v.stats["seeks"] > 0


def test_odd_frame_size_is_kept(make_clip, reference):
    assert reference("h264-odd444.mkv")[0].shape == (241, 321, 3)


@pytest.mark.parametrize("name", ["h264-bframes.mp4", "hevc.mp4", "vfr-h264.mkv"])
def test_backward_steps_and_playback(name, make_clip, reference, index_dir):
    ref = reference(name)
    with open_video(make_clip(name), index_cache_dir=index_dir, cache_bytes=0) as v:
        v.wait_index(30)
        for i in range(len(ref) - 1, -1, -7):  # stepping backwards: every step seeks
            assert np.array_equal(v.frame(i), ref[i])
        played = list(v.frames(5, 40))
        assert len(played) == 35
        assert all(np.array_equal(f, ref[5 + k]) for k, f in enumerate(played))
        assert sum(1 for _ in v.frames(len(ref) - 3)) == 3  # stops at the end


@pytest.mark.parametrize("name", VFR_CLIPS)
def test_vfr_clips_have_irregular_timestamps(name, make_clip, index_dir):
    with open_video(make_clip(name), index_cache_dir=index_dir) as v:
        v.wait_index(30)
        gaps = np.round(np.diff(v.index.timestamps_ms))
        assert len(np.unique(gaps)) > 1, "the VFR fixture must really be variable frame rate"
        assert np.all(gaps > 0)


def test_exact_before_index_is_ready(make_clip, reference, index_dir, monkeypatch):
    """With the index build held back, frames are decoded forward from the start, still exact."""
    name = "h264-bframes.mp4"
    ref = reference(name)
    release = threading.Event()
    real = background_module.load_or_build_index

    def slow_index(*args, **kwargs):
        release.wait(30)
        return real(*args, **kwargs)

    monkeypatch.setattr(background_module, "load_or_build_index", slow_index)
    with open_video(make_clip(name), index_cache_dir=index_dir) as v:
        assert not v.index_ready
        assert np.array_equal(v.frame(0), ref[0])  # first frame at once
        for i in (70, 3, 119, 50, 51):
            assert np.array_equal(v.frame(i), ref[i])
        with pytest.raises(IndexError):
            v.frame(len(ref) + 5)
        assert np.array_equal(v.frame(10), ref[10])  # usable after running off the end
        assert not v.index_ready
        release.set()
        assert v.wait_index(30)
        assert v.frame_count == len(ref)


def test_threads_share_one_video(make_clip, reference, index_dir):
    name = "vp9.webm"
    ref = reference(name)
    errors: list[str] = []
    with open_video(make_clip(name), index_cache_dir=index_dir, cache_bytes=0) as v:
        v.wait_index(30)

        def worker(seed: int) -> None:
            rng = random.Random(seed)
            for _ in range(40):
                i = rng.randrange(len(ref))
                if not np.array_equal(v.frame(i), ref[i]):
                    errors.append(f"thread {seed}: frame {i}")

        threads = [threading.Thread(target=worker, args=(s,)) for s in range(3)]
        for t in threads:
            t.start()
        for t in threads:
            t.join(60)
    assert errors == []


def test_prefetch_fills_the_cache_with_exact_frames(make_clip, reference, index_dir):
    name = "hevc.mp4"
    ref = reference(name)
    with open_video(make_clip(name), index_cache_dir=index_dir) as v:
        v.wait_index(30)
        v.prefetch(40, 20)
        v._read_ahead.join(30)
        assert all(i in v.cache for i in range(40, 60))
        grabs = v.stats["grabs"]
        for i in range(40, 60):
            assert np.array_equal(v.frame(i), ref[i])
        assert v.stats["grabs"] == grabs  # served from the cache, no decoding


def test_returned_frames_are_read_only(make_clip, index_dir):
    with open_video(make_clip("mjpeg.avi"), index_cache_dir=index_dir) as v:
        f = v.frame(3)
        with pytest.raises(ValueError):
            f[0, 0, 0] = 1
        f.copy()[0, 0, 0] = 1  # a copy is the caller's to change
