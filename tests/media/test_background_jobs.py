"""Background jobs give way to the viewer and share their results through the project."""

from __future__ import annotations

import os
import sys
import threading

import numpy as np
import pytest

from clipscribe.media import motion_curve, shared_cache_dir, thumbnail_strip


def _run_in_thread(fn):
    out = {}

    def work():
        out["result"] = fn()
        out["nice"] = os.getpriority(os.PRIO_PROCESS, threading.get_native_id())

    t = threading.Thread(target=work)
    t.start()
    t.join(60)
    return out


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="per-thread nice is Linux's")
def test_background_job_lowers_only_its_own_thread(make_clip, reference, tmp_path, index_dir):
    name = "h264-bframes.mp4"
    main_nice = os.getpriority(os.PRIO_PROCESS, threading.get_native_id())
    fg = thumbnail_strip(make_clip(name), 5, height=24, use_cache=False, index_cache_dir=index_dir)
    out = _run_in_thread(lambda: thumbnail_strip(make_clip(name), 5, height=24, use_cache=False,
                                                 index_cache_dir=index_dir, background=True))
    assert out["nice"] >= 10 > main_nice or main_nice >= 10
    assert os.getpriority(os.PRIO_PROCESS, threading.get_native_id()) == main_nice
    assert all(np.array_equal(a, b) for a, b in zip(fg, out["result"]))  # same exact frames
    curve = _run_in_thread(lambda: motion_curve(make_clip(name), method="diff", use_cache=False,
                                                background=True))["result"]
    assert np.array_equal(curve, motion_curve(make_clip(name), method="diff", use_cache=False))


def test_results_are_shared_through_the_project_folder(make_clip, tmp_path, index_dir):
    clip = make_clip("vp8.webm")
    shared = shared_cache_dir(tmp_path / "media")
    assert shared == tmp_path / "media" / ".clipscribe-cache"
    first = motion_curve(clip, method="diff", cache_dir=tmp_path / "alice",
                         shared_cache_dir=shared)
    assert len(list(shared.glob("*-motion-*.npy"))) == 1
    assert not (tmp_path / "alice").exists()  # stored once, where everybody finds it
    calls = []
    again = motion_curve(clip, method="diff", cache_dir=tmp_path / "bob", shared_cache_dir=shared,
                         progress=lambda d, t: calls.append(d))
    assert calls == [] and np.array_equal(first, again)  # bob computed nothing
    strip = thumbnail_strip(clip, 4, height=20, cache_dir=tmp_path / "bob",
                            shared_cache_dir=shared, index_cache_dir=index_dir)
    assert len(strip) == 4 and len(list(shared.glob("*-thumbs-*.npy"))) == 1


def test_a_personal_result_is_shared_later_and_a_read_only_folder_is_skipped(make_clip,
                                                                            tmp_path):
    clip = make_clip("mjpeg.avi")
    mine = tmp_path / "mine"
    motion_curve(clip, method="diff", cache_dir=mine)
    shared = tmp_path / "shared"
    calls = []
    motion_curve(clip, method="diff", cache_dir=mine, shared_cache_dir=shared,
                 progress=lambda d, t: calls.append(d))
    assert calls == [] and len(list(shared.glob("*.npy"))) == 1  # copied across, not recomputed
    blocked = tmp_path / "blocked"
    blocked.write_text("a file where the folder should be: nothing can be written below it")
    other = tmp_path / "other"
    curve = motion_curve(clip, method="flow", cache_dir=other, shared_cache_dir=blocked)
    assert curve.shape == (90,) and len(list(other.glob("*-motion-*.npy"))) == 1
