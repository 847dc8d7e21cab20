"""Thumbnail strips and motion curves: exact frames, progress, cancel and the result cache."""

from __future__ import annotations

import threading

import cv2
import numpy as np
import pytest

from clipscribe.media import JobCancelled, MediaError, motion_curve, sample_indices, thumbnail_strip



@pytest.fixture(scope="session")
def still_clip(clip_folder):
    """40 identical frames: no motion at all."""
    p = clip_folder / "still.avi"
    frame = np.zeros((120, 160, 3), np.uint8)
    cv2.rectangle(frame, (40, 30), (120, 90), (200, 180, 50), -1)
    out = cv2.VideoWriter(str(p), cv2.VideoWriter_fourcc(*"MJPG"), 30, (160, 120))
    for _ in range(40):
        out.write(frame)
    out.release()
    return p


def test_sample_indices_are_centres_of_equal_parts():
    assert sample_indices(100, 4).tolist() == [12, 37, 62, 87]
    assert sample_indices(3, 5).tolist() == [0, 0, 1, 2, 2]
    with pytest.raises(ValueError):
        sample_indices(10, 0)


def test_thumbnail_strip_uses_exact_frames(make_clip, reference, tmp_path, index_dir):
    name = "h264-bframes.mp4"
    ref = reference(name)
    seen = []
    strip = thumbnail_strip(make_clip(name), 6, height=30, cache_dir=tmp_path,
                            index_cache_dir=index_dir, progress=lambda d, t: seen.append((d, t)))
    assert len(strip) == 6
    for thumb, i in zip(strip, sample_indices(len(ref), 6)):
        assert thumb.shape == (30, 40, 3) and thumb.dtype == np.uint8
        expected = cv2.resize(ref[i], (40, 30), interpolation=cv2.INTER_AREA)
        assert np.array_equal(thumb, expected)
    assert seen[-1] == (6, 6)
    assert [d for d, _ in seen] == sorted(d for d, _ in seen)
    # Second call comes from the cache file (no progress reported, same pixels).
    seen.clear()
    again = thumbnail_strip(make_clip(name), 6, height=30, cache_dir=tmp_path,
                            progress=lambda d, t: seen.append((d, t)))
    assert seen == [] and all(np.array_equal(a, b) for a, b in zip(strip, again))
    assert len(list(tmp_path.glob("*-thumbs-*.npy"))) == 1


def test_motion_curve_flow_and_diff(make_clip, still_clip, tmp_path):
    moving = make_clip("mjpeg.avi")
    for method in ("flow", "diff"):
        curve = motion_curve(moving, method=method, cache_dir=tmp_path)
        assert curve.dtype == np.float32 and curve.shape == (90,)
        assert curve[0] == 0
        assert np.all(curve[1:] > 0.5)
        still = motion_curve(still_clip, method=method, cache_dir=tmp_path)
        assert still.shape == (40,)
        assert float(still.max()) < 0.05


def test_motion_flow_measures_a_known_shift(clip_folder, tmp_path):
    """A texture moving 2 px right per frame gives about 2 px/frame of flow (Farnebäck)."""
    rng = np.random.default_rng(3)
    base = cv2.GaussianBlur(rng.integers(0, 256, (240, 480), dtype=np.uint8), (0, 0), 3)
    base = cv2.normalize(base, None, 0, 255, cv2.NORM_MINMAX)
    p = clip_folder / "shift.avi"
    out = cv2.VideoWriter(str(p), cv2.VideoWriter_fourcc(*"MJPG"), 30, (320, 240))
    for i in range(12):
        out.write(cv2.cvtColor(np.ascontiguousarray(base[:, 100 - 2 * i:420 - 2 * i]),
                               cv2.COLOR_GRAY2BGR))
    out.release()
    curve = motion_curve(p, method="flow", scale=0.5, use_cache=False)
    assert np.median(curve[1:]) == pytest.approx(2.0, abs=0.5)


def test_motion_curve_bad_arguments(make_clip, tmp_path):
    with pytest.raises(ValueError):
        motion_curve(make_clip("mjpeg.avi"), method="magic", cache_dir=tmp_path)
    with pytest.raises(ValueError):
        motion_curve(make_clip("mjpeg.avi"), scale=0, cache_dir=tmp_path)
    with pytest.raises(MediaError):
        motion_curve(tmp_path / "gone.avi", cache_dir=tmp_path)


def test_jobs_cancel_with_an_event(make_clip, tmp_path, index_dir):
    stop = threading.Event()
    stop.set()
    with pytest.raises(JobCancelled):
        motion_curve(make_clip("vp8.webm"), cancel=stop, cache_dir=tmp_path)
    with pytest.raises(JobCancelled):
        thumbnail_strip(make_clip("vp8.webm"), 5, cancel=stop, cache_dir=tmp_path,
                        index_cache_dir=index_dir)
    assert list(tmp_path.glob("*.npy")) == []  # nothing half-written


def test_job_cancels_midway_with_a_callable(make_clip, tmp_path):
    done = []

    def progress(d, t):
        done.append(d)

    with pytest.raises(JobCancelled):
        motion_curve(make_clip("mjpeg.avi"), method="diff", cache_dir=tmp_path,
                     progress=progress, cancel=lambda: bool(done) and done[-1] >= 16)
    assert 16 <= done[-1] < 90


def test_job_cancelled_from_another_thread(make_clip, tmp_path):
    stop = threading.Event()
    result: list[BaseException] = []

    def run():
        try:
            motion_curve(make_clip("h264-odd444.mkv"), scale=1.0, use_cache=False, cancel=stop,
                         progress=lambda d, t: stop.set() if d >= 8 else None)
        except BaseException as exc:  # noqa: BLE001
            result.append(exc)

    t = threading.Thread(target=run)
    t.start()
    t.join(60)
    assert len(result) == 1 and isinstance(result[0], JobCancelled)
