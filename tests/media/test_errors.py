"""Bad files raise MediaError naming the file; bad frame numbers raise IndexError."""

from __future__ import annotations

import shutil

import pytest

from clipscribe.media import MediaError, open_video


def _assert_named(exc: pytest.ExceptionInfo, name: str, *words: str) -> None:
    msg = str(exc.value)
    assert name in msg
    assert any(w in msg for w in words), msg


def test_missing_file(tmp_path):
    with pytest.raises(MediaError) as exc:
        open_video(tmp_path / "nowhere.mp4")
    _assert_named(exc, "nowhere.mp4", "not found")


def test_zero_byte_file(tmp_path):
    p = tmp_path / "empty.mp4"
    p.touch()
    with pytest.raises(MediaError) as exc:
        open_video(p)
    _assert_named(exc, "empty.mp4", "empty")


def test_folder(tmp_path):
    d = tmp_path / "clip.mp4"
    d.mkdir()
    with pytest.raises(MediaError) as exc:
        open_video(d)
    _assert_named(exc, "clip.mp4", "folder")


def test_text_file_renamed_to_mp4(tmp_path):
    p = tmp_path / "notes.mp4"
    p.write_text("these are meeting notes, not a video\n" * 50)
    with pytest.raises(MediaError) as exc:
        open_video(p)
    _assert_named(exc, "notes.mp4", "not a video", "no decodable")


@pytest.mark.parametrize("name", ["h264-bframes.mp4", "mjpeg.avi"])
def test_truncated_file(name, make_clip, tmp_path):
    src = make_clip(name)
    p = tmp_path / f"cut-{name}"
    data = src.read_bytes()
    p.write_bytes(data[: len(data) // 10])
    # A cut mp4 loses its index (moov at the end) and cannot open; a cut avi may still
    # decode its first frames. Either way: a clear MediaError or a shorter, exact video.
    try:
        v = open_video(p, cache_bytes=0)
    except MediaError as exc:
        assert p.name in str(exc)
        return
    with v:
        v.wait_index(30)
        assert 0 < v.frame_count < 90
        with pytest.raises(IndexError):
            v.frame(v.frame_count)


def test_truncated_mp4_raises(make_clip, tmp_path):
    src = make_clip("h264-bframes.mp4")
    p = tmp_path / "half.mp4"
    p.write_bytes(src.read_bytes()[: src.stat().st_size // 2])
    with pytest.raises(MediaError) as exc:
        open_video(p)
    _assert_named(exc, "half.mp4", "truncated", "no decodable")


def test_noise_after_a_valid_header(make_clip, tmp_path):
    """A file that starts like an AVI but holds noise fails cleanly: no crash, no hang."""
    src = make_clip("mjpeg.avi")
    data = bytearray(src.read_bytes())
    for k in range(2048, len(data)):
        data[k] = (k * 7919) & 0xFF
    p = tmp_path / "noise.avi"
    p.write_bytes(bytes(data))
    with pytest.raises(MediaError) as exc:
        open_video(p)
    _assert_named(exc, "noise.avi", "no decodable", "not a video")


def test_index_out_of_range(make_clip, index_dir):
    with open_video(make_clip("mjpeg.avi"), index_cache_dir=index_dir) as v:
        v.wait_index(30)
        n = v.frame_count
        v.frame(n - 1)
        for bad in (n, n + 100, -1):
            with pytest.raises(IndexError):
                v.frame(bad)


def test_closed_video(make_clip, index_dir):
    v = open_video(make_clip("mjpeg.avi"), index_cache_dir=index_dir)
    v.close()
    v.close()  # twice is fine
    with pytest.raises(MediaError):
        v.frame(1)


def test_replaced_file_gets_its_own_index(make_clip, index_dir, tmp_path):
    """Indexes are keyed by content, so a file replaced in place is indexed afresh."""
    p = tmp_path / "replaced.avi"
    shutil.copy(make_clip("mjpeg.avi"), p)
    with open_video(p, index_cache_dir=index_dir) as v:
        v.wait_index(30)
        assert v.frame_count == 90
    shutil.copy(make_clip("mjpeg-odd.avi"), p)
    with open_video(p, index_cache_dir=index_dir) as v:
        v.wait_index(30)
        assert v.frame_count == 60
