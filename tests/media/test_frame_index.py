"""The frame index from packets: equal to the decode pass, checked where decoders drop frames,
and usable before it is complete; plus a 5-minute clip with an open GOP and a VFR section."""

from __future__ import annotations

import random
import subprocess
import threading

import numpy as np
import pytest

from clipscribe.media import index as index_module
from clipscribe.media import open_video
from clipscribe.media.index import PacketScan, build_frame_index, decode_index
from .clips import digest, frame_digests, have_ffmpeg, read_code, write_ffmpeg_streamed
from .conftest import CLIP_SPECS

LONG_FRAMES = 3000  # 5 minutes at 10 frames per second
_OPEN_GOP = ["-c:v", "libx264", "-preset", "veryfast", "-pix_fmt", "yuv420p", "-bf", "3",
             "-x264-params", "open-gop=1:keyint=50:min-keyint=50"]
# Frames 1000..1599 get 40 ms more after every third frame: a variable-rate section.
_VFR_SECTION = "setpts=(N/10+0.04*floor(clip(N-1000\\,0\\,600)/3))/TB"


@pytest.fixture(scope="module")
def long_clip(tmp_path_factory):
    if not have_ffmpeg():
        pytest.skip("ffmpeg not on PATH: needed to encode the long test clip")
    path = tmp_path_factory.mktemp("long") / "five-minutes.mkv"
    write_ffmpeg_streamed(path, LONG_FRAMES, 128, 96, _OPEN_GOP, fps=10, filters=_VFR_SECTION,
                          extra=["-fps_mode", "vfr"])
    return path, frame_digests(path)


def _same_index(a, b) -> bool:
    return (np.array_equal(np.round(a.timestamps_ms, 3), np.round(b.timestamps_ms, 3))
            and np.array_equal(a.keyframes, b.keyframes))


@pytest.mark.parametrize("name", sorted(CLIP_SPECS))
def test_packet_index_equals_decode_pass(name, make_clip, reference):
    path = make_clip(name)
    fast = build_frame_index(path)
    assert fast.method == "packets" and fast.note == ""
    assert fast.frame_count == len(reference(name))
    assert _same_index(fast, decode_index(path))


def test_long_clip_has_open_gops_and_a_vfr_section(long_clip):
    path, ref = long_clip
    assert len(ref) == LONG_FRAMES
    index = build_frame_index(path)
    assert index.method == "packets" and index.frame_count == LONG_FRAMES
    gaps = np.round(np.diff(index.timestamps_ms))
    assert len(np.unique(gaps[:900])) == 1 and len(np.unique(gaps[1000:1600])) > 1
    # open GOPs: some packet after a keyframe is shown before it
    scan = index_module.scan_packets(path)
    keys = [k for k, t in enumerate(scan.pts) if t in set(scan.keys)][1:]
    assert any(scan.pts[k + 1] < scan.pts[k] or scan.pts[k + 2] < scan.pts[k] for k in keys)
    assert _same_index(index, decode_index(path))


def test_long_clip_random_access_and_steps_are_exact(long_clip, tmp_path):
    path, ref = long_clip
    rng = random.Random(5)
    with open_video(path, index_cache_dir=tmp_path, cache_bytes=12 * 128 * 96 * 3) as v:
        assert v.wait_index(60)
        for i in rng.sample(range(LONG_FRAMES), 150):
            f = v.frame(i)
            assert digest(f) == ref[i] and read_code(f) == i
        for i in range(2990, 2890, -1):  # stepping backward near the end
            assert digest(v.frame(i)) == ref[i], f"frame {i}"
        for i in range(1590, 1640):  # forward across the end of the VFR section
            assert digest(v.frame(i)) == ref[i], f"frame {i}"


def test_backward_steps_reuse_a_decoded_run(long_clip, tmp_path):
    path, ref = long_clip
    with open_video(path, index_cache_dir=tmp_path, cache_bytes=20 * 128 * 96 * 3) as v:
        v.wait_index(60)
        v.frame(2999)
        seeks = v.stats["seeks"]
        for i in range(2998, 2899, -1):
            assert digest(v.frame(i)) == ref[i], f"frame {i}"
        # 99 steps back: one decoded run per ~18 frames, not one seek per step
        assert v.stats["back_runs"] >= 1
        assert v.stats["seeks"] - seeks <= 99 // 10


def test_far_frame_before_the_index_is_complete(long_clip, tmp_path, monkeypatch):
    """The packet pass is held after 2000 packets: frame 1500 is reached by an exact seek
    numbered from the packets read so far, not by decoding from the start."""
    path, ref = long_clip
    release, reached = threading.Event(), threading.Event()
    real_add = PacketScan.add

    def held_add(self, pts, key):
        if len(self.pts) == 2000:
            reached.set()
            release.wait(30)
        real_add(self, pts, key)

    monkeypatch.setattr(PacketScan, "add", held_add)
    try:
        with open_video(path, index_cache_dir=tmp_path) as v:
            assert reached.wait(30)
            f = v.frame(1500)
            assert not v.index_ready
            assert digest(f) == ref[1500]
            assert v.stats["early_seeks"] == 1 and v.stats["grabs"] < 1000
            assert digest(v.frame(1499)) == ref[1499]
            release.set()
            assert v.wait_index(60) and v.frame_count == LONG_FRAMES
            assert digest(v.frame(2999)) == ref[2999]
    finally:
        release.set()


def test_edit_list_that_cuts_frames_uses_the_decode_pass(make_clip, reference, tmp_path):
    """A stream copy cut at 1.1 s keeps the packets before the cut behind an edit list; the
    decoder drops their frames, so the packets would count too many."""
    src = make_clip("h264-bframes.mp4")
    cut = tmp_path / "cut.mp4"
    subprocess.run(["ffmpeg", "-hide_banner", "-loglevel", "error", "-y", "-ss", "1.1", "-i",
                    str(src), "-c", "copy", str(cut)], check=True, timeout=60)
    ref = frame_digests(cut)
    assert len(index_module.scan_packets(cut).pts) > len(ref)  # the case is real
    index = build_frame_index(cut)
    assert index.method == "decode" and "edit list" in index.note
    assert index.frame_count == len(ref)
    with open_video(cut, index_cache_dir=tmp_path / "idx") as v:
        assert v.wait_index(30) and v.index.method == "decode"
        for i in random.Random(1).sample(range(len(ref)), len(ref)):
            assert digest(v.frame(i)) == ref[i]


def test_index_records_how_it_was_built(make_clip, tmp_path):
    path = make_clip("vp9.webm")
    index = build_frame_index(path, method="decode")
    again = type(index).from_bytes(index.to_bytes())
    assert (again.method, again.note) == ("decode", "asked for")
    assert _same_index(again, index)
    with pytest.raises(ValueError):
        build_frame_index(path, method="guess")


@pytest.mark.parametrize("packets, problem", [
    ([(0.0, True), (100.0, False), (33.0, False)], None),
    ([(33.0, False), (0.0, True)], "does not start with a keyframe"),
    ([(100.0, True), (33.0, False), (67.0, False)], "before the first keyframe"),
])
def test_packet_checks(packets, problem):
    scan = PacketScan()
    for pts, key in packets:
        scan.add(pts, key)
    assert (scan.problem is None) if problem is None else problem in scan.problem


def test_settled_frames_grow_with_the_pass():
    scan = PacketScan()
    order = [0] + [t for g in range(1, 34) for t in (3 * g, 3 * g - 2, 3 * g - 1)]
    for t in order:  # decode order I0 P3 B1 B2 P6 B4 B5 ...: each P before the Bs shown first
        scan.add(float(t), t == 0)
    ts, keys = scan.settled()
    assert scan.problem is None
    assert 0 < len(ts) < len(order) and list(keys) == [0]
    assert ts.tolist() == list(range(len(ts)))  # no frame missing below the settled bound
    scan.done = True
    assert len(scan.settled()[0]) == len(order)


def test_end_of_a_never_seen_file_is_known_from_the_packets(long_clip, tmp_path, monkeypatch):
    """Asking beyond the last frame before the index is stored answers at once from the
    packets (no decoding to the end)."""
    path, ref = long_clip
    release = threading.Event()
    real_from_scan = index_module.index_from_scan

    def held(scan):  # the packet pass is over; the index is not made yet
        release.wait(30)
        return real_from_scan(scan)

    monkeypatch.setattr(index_module, "index_from_scan", held)
    try:
        with open_video(path, index_cache_dir=tmp_path) as v:
            with pytest.raises(IndexError):
                v.frame(LONG_FRAMES + 10)
            assert not v.index_ready and v.stats["grabs"] < 100
            assert digest(v.frame(LONG_FRAMES - 1)) == ref[-1]
            release.set()
    finally:
        release.set()


def test_frames_served_early_are_dropped_when_the_packets_fail_late(long_clip, tmp_path,
                                                                    monkeypatch):
    """A problem found only at the end of the packet pass sends the file to the decode pass;
    frames numbered from the packets meanwhile leave the cache, and access stays exact."""
    path, ref = long_clip
    release, reached = threading.Event(), threading.Event()
    real_scan = index_module.scan_packets

    def late_problem(p, *, scan=None, **kw):
        scan = scan if scan is not None else PacketScan()
        real_add = scan.add

        def add(pts, key):
            if len(scan.pts) == 2000:
                reached.set()
                release.wait(30)
            real_add(pts, key)

        scan.add = add
        real_scan(p, scan=scan, **kw)
        if reached.is_set():  # only the viewer's pass, not the decode pass's key scan
            scan.problem = "a problem seen at the end (made up for the test)"
        return scan

    monkeypatch.setattr(index_module, "scan_packets", late_problem)
    try:
        with open_video(path, index_cache_dir=tmp_path) as v:
            assert reached.wait(30)
            assert digest(v.frame(1500)) == ref[1500] and v.stats["early_seeks"] == 1
            assert 1500 in v.cache
            release.set()
            assert v.wait_index(120) and v.index.method == "decode"
            assert "made up" in v.index.note and 1500 not in v.cache
            for i in (1500, 1499, 10, 2999):
                assert digest(v.frame(i)) == ref[i]
    finally:
        release.set()
