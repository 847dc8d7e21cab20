"""A least-recently-used cache of decoded frames bounded by a byte budget."""

from __future__ import annotations

import sys
import threading
from collections import OrderedDict

import numpy as np

# 128 MiB: about 48 frames of 720p or 21 of 1080p, enough to step back a second or two. A
# larger budget makes forward stepping slower while the cache fills (every new frame is fresh
# memory the kernel must fault in), measured by benchmarks/bench_media.py.
DEFAULT_CACHE_BYTES = 128 * 1024 * 1024


class FrameCache:
    """LRU map from frame number to a read-only array, never holding more than ``budget`` bytes.

    Written by hand because the standard ``functools.lru_cache`` bounds entry count, not bytes.
    A frame larger than the whole budget is not stored. All methods take an internal lock, so the
    cache may be shared between threads.
    """

    def __init__(self, budget: int = DEFAULT_CACHE_BYTES) -> None:
        if budget < 0:
            raise ValueError(f"cache budget must be >= 0 bytes, got {budget}")
        self.budget = int(budget)
        self._items: OrderedDict[int, np.ndarray] = OrderedDict()
        self._nbytes = 0
        self._lock = threading.Lock()
        self.hits = 0
        self.misses = 0

    @property
    def nbytes(self) -> int:
        """Bytes held now (sum of ``array.nbytes``); always ``<= budget``."""
        return self._nbytes

    def __len__(self) -> int:
        return len(self._items)

    def __contains__(self, key: int) -> bool:
        return key in self._items

    def get(self, key: int) -> np.ndarray | None:
        with self._lock:
            arr = self._items.get(key)
            if arr is None:
                self.misses += 1
                return None
            self._items.move_to_end(key)
            self.hits += 1
            return arr

    def put(self, key: int, arr: np.ndarray) -> None:
        """Store ``arr`` (made read-only), evicting the least recently used frames to fit."""
        size = int(arr.nbytes)
        with self._lock:
            old = self._items.pop(key, None)
            if old is not None:
                self._nbytes -= int(old.nbytes)
            if size > self.budget:
                return
            while self._items and self._nbytes + size > self.budget:
                _, victim = self._items.popitem(last=False)
                self._nbytes -= int(victim.nbytes)
            arr.flags.writeable = False
            self._items[key] = arr
            self._nbytes += size

    def spare(self, like: np.ndarray | tuple[int, ...]) -> np.ndarray | None:
        """Take out the frame the next :meth:`put` of a frame shaped ``like`` would evict, to be
        decoded into again, when nothing outside the cache still holds it; else None.

        Decoding into an array the process already has spares the kernel faulting in fresh
        memory for every new frame (measured in benchmarks/bench_media.py: stepping).
        """
        shape = like if isinstance(like, tuple) else like.shape
        size = int(np.prod(shape))
        with self._lock:
            if not self._items or self._nbytes + size <= self.budget:
                return None
            key, arr = next(iter(self._items.items()))
            # references: the cache's, ``arr`` and getrefcount's own argument
            if arr.shape != shape or arr.dtype != np.uint8 or sys.getrefcount(arr) > 3:
                return None
            del self._items[key]
            self._nbytes -= int(arr.nbytes)
        arr.flags.writeable = True
        return arr

    def clear(self) -> None:
        with self._lock:
            self._items.clear()
            self._nbytes = 0
