"""Perceptual fingerprints of clips: 64-bit DCT hashes of sampled frames.

The DCT hash of a frame (Zauner 2010, "Implementation and Benchmarking of Perceptual Image Hash
Functions", master's thesis, FH Hagenberg; the pHash construction): grey, scale to 32x32,
2-D DCT-II (``cv2.dct``), keep the top-left 8x8 low-frequency block, and set bit ``k`` when
coefficient ``k`` exceeds the median of the 63 non-DC coefficients. Near-identical pictures
(re-encoded, resized) give hashes a few bits apart; unrelated pictures differ in about half of
the 64 bits.
"""

from __future__ import annotations

import os

import cv2
import numpy as np

from ._common import Cancel, Progress, check_cancel, check_media_path, report
from .jobs import cached_result, sample_indices, wait_for_index
from .video import open_video

_WEIGHTS = np.left_shift(np.uint64(1), np.arange(63, -1, -1, dtype=np.uint64))


def dct_hash(frame: np.ndarray) -> int:
    """64-bit perceptual hash of one frame (BGR or grey uint8); bit 63 is coefficient (0, 0)."""
    grey = cv2.cvtColor(frame, cv2.COLOR_BGR2GRAY) if frame.ndim == 3 else frame
    small = cv2.resize(grey, (32, 32), interpolation=cv2.INTER_AREA).astype(np.float32)
    low = cv2.dct(small)[:8, :8].ravel()
    bits = low > np.median(low[1:])
    return int(np.sum(_WEIGHTS[bits], dtype=np.uint64))


def fingerprint(path: str | os.PathLike, k: int = 16, *, cancel: Cancel = None,
                progress: Progress = None, cache_dir: str | os.PathLike | None = None,
                use_cache: bool = True,
                index_cache_dir: str | os.PathLike | None = None) -> np.ndarray:
    """DCT hashes of ``k`` frames at the centres of ``k`` equal parts of the clip.

    Returns
    -------
    ndarray of uint64, shape (k,)
        ``dct_hash`` of frames ``sample_indices(frame_count, k)`` (exact decode-order frames).
    """
    p = check_media_path(path)

    def compute() -> np.ndarray:
        with open_video(p, cache_bytes=0, index_cache_dir=index_cache_dir) as v:
            count = wait_for_index(v, cancel)
            out = np.empty(k, dtype=np.uint64)
            for j, i in enumerate(sample_indices(count, k).tolist()):
                check_cancel(cancel, f"{p}: fingerprint")
                out[j] = dct_hash(v.frame(i))
                report(progress, j + 1, k)
            return out

    return cached_result(p, "fingerprint", {"k": k}, compute, cache_dir=cache_dir,
                         use_cache=use_cache)


def clip_fingerprint(hashes_or_path: np.ndarray | str | os.PathLike, k: int = 16,
                     **kwargs) -> int:
    """One 64-bit value for a clip: the bitwise majority vote of its frame hashes.

    Bit ``b`` is 1 when more than half of the ``k`` frame hashes have bit ``b`` set. Accepts the
    array :func:`fingerprint` returns, or a path (then ``fingerprint(path, k, **kwargs)``).
    """
    if isinstance(hashes_or_path, (str, os.PathLike)):
        hashes = fingerprint(hashes_or_path, k, **kwargs)
    else:
        hashes = np.asarray(hashes_or_path, dtype=np.uint64).ravel()
    if hashes.size == 0:
        raise ValueError("no frame hashes to combine")
    bits = (hashes[:, None] & _WEIGHTS[None, :]) != 0
    majority = bits.sum(axis=0) * 2 > hashes.size
    return int(np.sum(_WEIGHTS[majority], dtype=np.uint64))


def hamming(a, b) -> int | np.ndarray:
    """Number of differing bits between 64-bit hashes (ints or uint64 arrays, broadcast)."""
    if isinstance(a, (int, np.integer)) and isinstance(b, (int, np.integer)):
        return (int(a) ^ int(b)).bit_count()
    x = np.bitwise_xor(np.asarray(a, dtype=np.uint64), np.asarray(b, dtype=np.uint64))
    return np.unpackbits(x.view(np.uint8).reshape(*x.shape, 8), axis=-1).sum(axis=-1)
