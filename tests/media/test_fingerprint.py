"""DCT perceptual hashes: checked against SciPy's DCT, and near-duplicate clips found."""

from __future__ import annotations

import subprocess

import cv2
import numpy as np
import pytest
import scipy.fft
import scipy.spatial.distance

from clipscribe.media import clip_fingerprint, dct_hash, fingerprint, hamming

from .clips import have_ffmpeg, make_frame, write_ffmpeg


def _reference_hash(frame: np.ndarray) -> int:
    """The same construction written with SciPy's orthonormal DCT-II (scipy.fft.dctn)."""
    grey = cv2.cvtColor(frame, cv2.COLOR_BGR2GRAY)
    small = cv2.resize(grey, (32, 32), interpolation=cv2.INTER_AREA).astype(np.float64)
    low = scipy.fft.dctn(small, type=2, norm="ortho")[:8, :8].ravel()
    bits = low > np.median(low[1:])
    return int("".join("1" if b else "0" for b in bits), 2)


@pytest.mark.parametrize("seed", [0, 1, 2, 3])
def test_dct_hash_matches_scipy_reference(seed):
    frame = make_frame(seed * 11, 160, 120, seed=seed)
    # cv2.dct and scipy's orthonormal DCT-II agree to float32 rounding; allow a bit that sits on
    # the median to flip.
    assert hamming(dct_hash(frame), _reference_hash(frame)) <= 1


def test_hamming_matches_scipy():
    rng = np.random.default_rng(0)
    a = rng.integers(0, 2**63, size=20, dtype=np.uint64)
    b = rng.integers(0, 2**63, size=20, dtype=np.uint64)
    ours = hamming(a, b)
    for x, y, d in zip(a, b, ours):
        bx = np.unpackbits(np.array([x], ">u8").view(np.uint8))
        by = np.unpackbits(np.array([y], ">u8").view(np.uint8))
        # scipy's hamming is the fraction of differing positions.
        assert d == round(scipy.spatial.distance.hamming(bx, by) * 64)
        assert hamming(int(x), int(y)) == d
    assert hamming(0, 2**64 - 1) == 64


def test_clip_fingerprint_is_bitwise_majority():
    hashes = np.array([0b1100, 0b1010, 0b1001], dtype=np.uint64)
    assert clip_fingerprint(hashes) == 0b1000
    with pytest.raises(ValueError):
        clip_fingerprint(np.array([], dtype=np.uint64))


@pytest.fixture(scope="session")
def dup_clips(clip_folder):
    if not have_ffmpeg():
        pytest.skip("ffmpeg not on PATH: needed to re-encode the near-duplicate clip")
    x264 = ["-c:v", "libx264", "-preset", "veryfast", "-pix_fmt", "yuv420p", "-g", "30"]
    original = write_ffmpeg(clip_folder / "fp-original.mp4", 80, 320, 240, x264, seed=21,
                            code=False)
    other = write_ffmpeg(clip_folder / "fp-other.mp4", 80, 320, 240, x264, seed=55,
                         code=False)
    copy = clip_folder / "fp-copy.webm"
    subprocess.run(["ffmpeg", "-hide_banner", "-loglevel", "error", "-y", "-i", str(original),
                    "-vf", "scale=200:150", "-c:v", "libvpx", "-b:v", "200k", "-deadline",
                    "realtime", "-cpu-used", "8", str(copy)], check=True, timeout=120)
    return original, copy, other


def test_near_duplicate_is_close_and_other_clip_is_far(dup_clips, tmp_path, index_dir):
    original, copy, other = dup_clips
    kw = {"cache_dir": tmp_path, "index_cache_dir": index_dir}
    fa, fb, fc = (fingerprint(p, 16, **kw) for p in (original, copy, other))
    assert fa.dtype == np.uint64 and fa.shape == (16,)
    # A threshold of about 10 of 64 bits for "same picture" is common practice for pHash.
    assert int(np.max(hamming(fa, fb))) <= 10
    assert hamming(clip_fingerprint(fa), clip_fingerprint(fb)) <= 10
    assert hamming(clip_fingerprint(fa), clip_fingerprint(fc)) > 20
    assert float(np.mean(hamming(fa, fc))) > 20
    # Cached: the same array again, and a path works for clip_fingerprint.
    assert np.array_equal(fingerprint(original, 16, **kw), fa)
    assert clip_fingerprint(original, 16, **kw) == clip_fingerprint(fa)
