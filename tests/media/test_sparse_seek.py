"""Seeks that decode only the referenced pictures before the target: the same pixels as a
sequential decode, used only where that was checked, and the usual seek everywhere else."""

from __future__ import annotations

import random

import numpy as np
import pytest

from clipscribe.media import open_video
from clipscribe.media import sparse as sparse_module
from clipscribe.media import video as video_module
from clipscribe.media.index import build_frame_index
from clipscribe.media.sparse import SparseCapture, nal_facts, sparse_matches

H264_IDR = ["h264-bframes.mp4", "h264.mov", "h264-odd444.mkv", "vfr-h264.mkv", "vfr-h264.mp4"]
NOT_H264 = ["hevc.mp4", "vp9.webm", "mjpeg.avi", "mpeg4-bframes.mkv"]


@pytest.fixture
def any_size(monkeypatch):
    """The test clips are small: let sparse seeks be used on them."""
    monkeypatch.setattr(video_module, "SPARSE_MIN_WORK", 0)


def test_small_files_keep_the_usual_seek(make_clip, tmp_path):
    with open_video(make_clip("h264-bframes.mp4"), index_cache_dir=tmp_path, cache_bytes=0) as v:
        v.wait_index(30)
        v.frame(110)
        v.frame(20)
        assert v.stats["seeks"] > 0 and v.stats["sparse_seeks"] == 0


@pytest.mark.parametrize("name", H264_IDR)
def test_every_frame_reached_sparsely_equals_sequential_decode(name, make_clip, reference):
    path, ref = make_clip(name), reference(name)
    index = build_frame_index(path)
    assert sparse_matches(path, index)
    left_out = 0
    for i in range(len(ref)):
        sparse = SparseCapture.open_at(path, index, i)
        assert sparse is not None, f"{name}: frame {i} could not be reached"
        try:
            ok, frame = sparse.retrieve()
            assert ok and np.array_equal(frame, ref[i]), f"{name}: frame {i}"
            for j in range(i + 1, min(i + 3, len(ref))):  # and it steps on from there
                assert sparse.grab()
                ok, frame = sparse.retrieve()
                assert ok and np.array_equal(frame, ref[j]), f"{name}: frame {j} after {i}"
            left_out += sparse.left_out
        finally:
            sparse.release()
    assert left_out > 0, "unreferenced B-frames before the target must be left out"


def test_stepping_on_reaches_the_end(make_clip, reference):
    name = "h264-bframes.mp4"
    path, ref = make_clip(name), reference(name)
    sparse = SparseCapture.open_at(path, build_frame_index(path), 90)
    try:
        frames = [sparse.retrieve()[1]]
        while sparse.grab():
            frames.append(sparse.retrieve()[1])
    finally:
        sparse.release()
    assert len(frames) == len(ref) - 90
    assert all(np.array_equal(f, r) for f, r in zip(frames, ref[90:]))


@pytest.mark.parametrize("name", NOT_H264)
def test_other_codecs_are_not_reached_sparsely(name, make_clip):
    path = make_clip(name)
    index = build_frame_index(path)
    assert SparseCapture.open_at(path, index, index.frame_count - 1) is None
    assert not sparse_matches(path, index)


def test_keyframes_that_are_not_idr_pictures_use_the_usual_seek(make_clip, reference, tmp_path, any_size):
    """Open GOPs: pictures after a non-IDR keyframe may refer to pictures before it."""
    name = "h264-opengop.mkv"
    path, ref = make_clip(name), reference(name)
    index = build_frame_index(path)
    later = [int(k) for k in index.keyframes if k > 0]
    assert later, "the fixture must have keyframes after the first"
    assert SparseCapture.open_at(path, index, later[0] + 5) is None
    with open_video(path, index_cache_dir=tmp_path) as v:
        v.wait_index(30)
        for i in random.Random(3).sample(range(len(ref)), 40):
            assert np.array_equal(v.frame(i), ref[i])
        assert v.stats["seeks"] > v.stats["sparse_seeks"]
        assert set(later) <= v._sparse_refused  # remembered: not tried again


def test_video_seeks_sparsely_and_stays_exact(make_clip, reference, tmp_path, any_size):
    name = "h264-bframes.mp4"
    path, ref = make_clip(name), reference(name)
    with open_video(path, index_cache_dir=tmp_path, cache_bytes=0) as v:
        v.wait_index(30)
        for i in random.Random(7).sample(range(len(ref)), 60):
            assert np.array_equal(v.frame(i), ref[i]), f"frame {i}"
        assert v.stats["sparse_seeks"] > 0
        assert v.stats["sparse_seeks"] == v.stats["seeks"]


def test_backward_steps_across_keyframes_equal_fresh_exact_seeks(make_clip, reference, tmp_path, any_size):
    """Stepping back from frame 110 to 0 crosses the keyframes at 100 and 50; each step equals
    the frame a fresh video reaches by one seek."""
    name = "h264-bframes.mp4"
    path, ref = make_clip(name), reference(name)
    frame_bytes = ref[0].nbytes
    with open_video(path, index_cache_dir=tmp_path, cache_bytes=12 * frame_bytes) as v, \
            open_video(path, index_cache_dir=tmp_path, cache_bytes=0) as fresh:
        v.wait_index(30)
        fresh.wait_index(30)
        v.frame(110)
        for i in range(109, -1, -1):
            assert np.array_equal(v.frame(i), fresh.frame(i)), f"frame {i}"
            assert np.array_equal(v.frame(i), ref[i]), f"frame {i}"
        assert v.stats["back_runs"] >= 110 // 12
        assert v.stats["sparse_seeks"] > 0


def test_a_file_that_fails_the_check_is_seeked_the_usual_way(make_clip, reference, tmp_path,
                                                             monkeypatch, any_size):
    """If leaving pictures out changed the pixels (here: pictures that are referenced are taken
    for unreferenced ones), the check finds it and every seek is the usual one."""
    name = "h264-bframes.mp4"
    path, ref = make_clip(name), reference(name)

    def all_unreferenced(packet: bytes):
        ref_, idr, kinds = nal_facts(packet)
        return idr, idr, kinds  # only the IDR picture counts as referenced

    monkeypatch.setattr(sparse_module, "nal_facts", all_unreferenced)
    assert not sparse_matches(path, build_frame_index(path))
    with open_video(path, index_cache_dir=tmp_path, cache_bytes=0) as v:
        v.wait_index(30)
        for i in random.Random(11).sample(range(len(ref)), 30):
            assert np.array_equal(v.frame(i), ref[i])
        assert v.stats["seeks"] > 0 and v.stats["sparse_seeks"] == 0


def test_forward_decoding_is_kept_for_near_targets(make_clip, tmp_path, any_size):
    name = "h264-bframes.mp4"
    with open_video(make_clip(name), index_cache_dir=tmp_path, cache_bytes=0) as v:
        v.wait_index(30)
        v.frame(51)
        seeks = v.stats["seeks"]
        v.frame(51 + video_module.FORWARD_LIMIT - 5)  # within reach: decoded forward
        assert v.stats["seeks"] == seeks
