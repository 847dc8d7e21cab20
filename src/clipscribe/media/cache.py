"""A least-recently-used cache of decoded frames bounded by a byte budget."""

from __future__ import annotations

import math
import sys
import threading
from collections import OrderedDict

import numpy as np

# 128 MiB: about 48 frames of 720p or 21 of 1080p, enough to step back a second or two. A
# larger budget makes forward stepping slower while the cache fills (every new frame is fresh
# memory the kernel must fault in), measured by benchmarks/bench_media.py.
DEFAULT_CACHE_BYTES = 128 * 1024 * 1024


class _SparePool:
    """Frame arrays of emptied caches that nobody holds, for the next cache to decode into.

    A cache that grows takes fresh memory for every frame, and the kernel faults in and zeroes
    each page of it on the first write: filling 128 MiB at 1080p costs 25-45 ms of CPU, a few
    per cent of 300 steps (measured by benchmarks/bench_media.py). Moving to the next clip of the
    same size reuses the arrays of the previous one instead. Process-wide and bounded by
    ``budget`` bytes; arrays of another shape than the one asked for are never handed out.
    """

    def __init__(self, budget: int) -> None:
        self.budget = budget
        self._arrays: list[np.ndarray] = []
        self._nbytes = 0
        self._lock = threading.Lock()

    def give(self, arrays: list[np.ndarray]) -> None:
        """Keep ``arrays``, letting the oldest kept ones go beyond the budget (the clip closed
        last is the likeliest to be followed by one of its size)."""
        with self._lock:
            for arr in arrays:
                if arr.nbytes <= self.budget:
                    self._arrays.append(arr)
                    self._nbytes += arr.nbytes
            while self._nbytes > self.budget:
                self._nbytes -= self._arrays.pop(0).nbytes

    def take(self, shape: tuple[int, ...]) -> np.ndarray | None:
        with self._lock:
            for k in range(len(self._arrays) - 1, -1, -1):
                if self._arrays[k].shape == shape:
                    arr = self._arrays.pop(k)
                    self._nbytes -= arr.nbytes
                    return arr
        return None

    def top_up(self, shape: tuple[int, ...], nbytes: int, *, most: int | None = None) -> bool:
        """Make arrays shaped ``shape`` (written once, so their pages are the process's) until
        the pool holds ``nbytes`` of that shape, or its budget; at most ``most`` now. True
        while more remain to be made.

        A viewer calls this while idle after opening a video (:meth:`Video.warm_cache`): the
        first video of a process otherwise pays for its cache's fresh pages during its first
        steps (forward stepping at 1080p 0.6-0.7x a raw read loop in that case, ~1.0x once the
        pool holds them; benchmarks/bench_media.py).
        """
        size = math.prod(shape)
        with self._lock:
            have = sum(a.nbytes for a in self._arrays if a.shape == shape)
            want = min(nbytes, self.budget)
        n = max((want - have) // size, 0) if size else 0
        made = []
        for _ in range(n if most is None else min(n, most)):
            arr = np.empty(shape, np.uint8)
            arr.fill(0)
            made.append(arr)
        self.give(made)
        return len(made) < n

    def clear(self) -> None:
        """Let the memory go (tests, or a process done with video for a while)."""
        with self._lock:
            self._arrays.clear()
            self._nbytes = 0


SPARE_POOL = _SparePool(DEFAULT_CACHE_BYTES)


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
        """An array shaped ``like`` for the next frame to be decoded into, or None (then the
        decoder allocates one): while the cache has room, one from :data:`SPARE_POOL`; when it
        is full, the frame the next :meth:`put` would evict, when nothing outside the cache
        still holds it (so a frame handed out never changes while anyone holds it).

        Decoding into an array the process already has spares the kernel faulting in fresh
        memory for every new frame (measured in benchmarks/bench_media.py: stepping).
        """
        shape = like if isinstance(like, tuple) else like.shape
        size = math.prod(shape)
        with self._lock:
            if self._nbytes + size <= self.budget:
                arr = SPARE_POOL.take(shape)
                if arr is not None:
                    arr.flags.writeable = True
                return arr
            if not self._items:
                return None
            key, arr = next(iter(self._items.items()))
            # references: the cache's, ``arr`` and getrefcount's argument; a numpy view of the
            # frame holds one more, so a held view counts as holding the frame
            if arr.shape != shape or arr.dtype != np.uint8 or sys.getrefcount(arr) > 3:
                return None
            del self._items[key]
            self._nbytes -= int(arr.nbytes)
        arr.flags.writeable = True
        return arr

    def warm(self, shape: tuple[int, ...], frames: int, *, most: int | None = None) -> bool:
        """Ready in :data:`SPARE_POOL` the memory this cache has yet to fill with frames shaped
        ``shape`` (of a clip of ``frames`` frames: never more than it holds); ``most`` frames
        now. True while more remain. A full cache wants nothing more."""
        room = min(self.budget, frames * math.prod(shape)) - self._nbytes
        return SPARE_POOL.top_up(shape, max(room, 0), most=most)

    def clear(self) -> None:
        """Forget every frame; the ones nobody holds go to :data:`SPARE_POOL`."""
        with self._lock:
            arrays = list(self._items.values())
            self._items.clear()
            self._nbytes = 0
        free = []
        while arrays:
            arr = arrays.pop()
            # references: ``arr`` and getrefcount's argument, as in :meth:`spare`
            if arr.dtype == np.uint8 and sys.getrefcount(arr) <= 2:
                free.append(arr)
        SPARE_POOL.give(free)
