"""Session-wide test clips, made once per run into a temporary folder."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import numpy as np
import pytest

from .clips import have_ffmpeg, sequential_frames, write_ffmpeg, write_opencv

_X264 = ["-c:v", "libx264", "-preset", "veryfast", "-pix_fmt", "yuv420p", "-bf", "3", "-g", "50"]
# Irregular presentation times: a 50 ms gap after every 5th frame; and a mixed pattern.
_VFR_A = "setpts=PTS+floor(N/5)*0.05/TB"
_VFR_B = "setpts=N/30/TB+if(mod(N\\,7)\\,0\\,0.013)/TB+floor(N/7)*0.04/TB"

# name -> (needs ffmpeg, maker(path))
CLIP_SPECS: dict[str, tuple[bool, Callable[[Path], Path]]] = {
    "mjpeg.avi": (False, lambda p: write_opencv(p, "MJPG", 90, 160, 120)),
    "mpeg4-cv.mp4": (False, lambda p: write_opencv(p, "mp4v", 90, 160, 120)),
    "mjpeg-odd.avi": (False, lambda p: write_opencv(p, "MJPG", 60, 321, 241)),
    "h264-bframes.mp4": (True, lambda p: write_ffmpeg(p, 120, 160, 120, _X264)),
    "h264-opengop.mkv": (True, lambda p: write_ffmpeg(
        p, 120, 160, 120, [*_X264, "-x264-params", "open-gop=1:keyint=30"])),
    "h264.mov": (True, lambda p: write_ffmpeg(p, 90, 160, 120, _X264)),
    "h264-odd444.mkv": (True, lambda p: write_ffmpeg(
        p, 90, 321, 241, ["-c:v", "libx264", "-preset", "veryfast", "-pix_fmt", "yuv444p",
                          "-bf", "3", "-g", "30"])),
    "hevc.mp4": (True, lambda p: write_ffmpeg(
        p, 90, 160, 120, ["-c:v", "libx265", "-pix_fmt", "yuv420p", "-x265-params",
                          "log-level=error:keyint=30:bframes=4"])),
    "vp9.webm": (True, lambda p: write_ffmpeg(
        p, 90, 160, 120, ["-c:v", "libvpx-vp9", "-g", "30", "-deadline", "realtime",
                          "-cpu-used", "8"])),
    "vp8.webm": (True, lambda p: write_ffmpeg(
        p, 90, 160, 120, ["-c:v", "libvpx", "-g", "30", "-deadline", "realtime",
                          "-cpu-used", "8"])),
    "mpeg4-bframes.mkv": (True, lambda p: write_ffmpeg(
        p, 90, 160, 120, ["-c:v", "mpeg4", "-bf", "2", "-g", "30", "-q:v", "4"])),
    "vfr-h264.mkv": (True, lambda p: write_ffmpeg(
        p, 100, 160, 120, _X264, filters=_VFR_A, extra=["-fps_mode", "vfr"])),
    "vfr-h264.mp4": (True, lambda p: write_ffmpeg(
        p, 100, 160, 120, _X264, filters=_VFR_B, extra=["-fps_mode", "vfr"])),
}
VFR_CLIPS = ("vfr-h264.mkv", "vfr-h264.mp4")


@pytest.fixture(scope="session")
def clip_folder(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("clips")


@pytest.fixture(scope="session")
def index_dir(tmp_path_factory) -> Path:
    return tmp_path_factory.mktemp("frame-index")


@pytest.fixture(scope="session")
def make_clip(clip_folder) -> Callable[[str], Path]:
    """``make_clip(name)`` returns the path of a clip from CLIP_SPECS, encoding it on first use."""
    made: dict[str, Path] = {}

    def get(name: str) -> Path:
        if name not in made:
            needs_ffmpeg, maker = CLIP_SPECS[name]
            if needs_ffmpeg and not have_ffmpeg():
                pytest.skip(f"ffmpeg not on PATH: needed to encode the {name} test clip")
            made[name] = maker(clip_folder / name)
        return made[name]

    return get


@pytest.fixture(scope="session")
def reference(make_clip) -> Callable[[str], list[np.ndarray]]:
    """``reference(name)``: the clip's frames from a plain sequential read() loop."""
    done: dict[str, list[np.ndarray]] = {}

    def get(name: str) -> list[np.ndarray]:
        if name not in done:
            done[name] = sequential_frames(make_clip(name))
        return done[name]

    return get
