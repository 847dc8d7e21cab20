"""Benchmark of clipscribe.media against plain OpenCV on a 720p H.264 clip (B-frames, long GOP)
and on a 10-minute 1080p H.264 file (B-frames, GOP 250).

Prints one JSON object. Run: PYTHONPATH=src python benchmarks/bench_media.py [--frames 300]
[--long-minutes 10 | --long-minutes 0 to leave the long file out]. The long file and its
reference digests are made once into benchmarks/out/ (git-ignored; making them takes minutes).

The long-file cases (``long``), each beside the alternative:
- frame index: the packet pass (``build_frame_index``) versus the decode pass;
- frame 9,000 of a never-seen file (fresh index folder, open included) versus opening a capture
  and the naive ``cap.set(CAP_PROP_POS_FRAMES, i); cap.read()``;
- cold random access (index ready, cache emptied before each frame) versus the naive seek;
- stepping forward and stepping backward near the end versus a raw ``read()`` loop, the three
  alternating in blocks of 20 frames (median and range of five runs, by wall and by CPU time);
- peak memory (VmHWM of a fresh process) of random access plus stepping, ours versus naive.

Measured side by side in the same run:
- random access (50 distinct random frames): ``Video.frame(i)`` cold (index built, cache empty)
  and cached, versus the naive ``cap.set(CAP_PROP_POS_FRAMES, i); cap.read()``; exactness of
  both against a sequential ``read()`` decode (compared by a BLAKE2 digest of the pixels);
- stepping ``frame(0), frame(1), ...`` versus a raw ``read()`` loop (frames per second, ratio);
- time to the first frame of a never-seen clip (fresh index cache folder);
- peak memory while reading every frame with a small cache budget: traced Python/numpy
  allocations (tracemalloc) in this process and the peak resident set (VmHWM) of a fresh child
  process, both next to the budget.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import random
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import cv2

from clipscribe.media import open_video


def digest(frame) -> str:
    return hashlib.blake2b(frame.tobytes(), digest_size=16).hexdigest()


def percentile(values: list[float], q: float) -> float:
    s = sorted(values)
    k = min(len(s) - 1, max(0, round(q / 100 * (len(s) - 1))))
    return s[k]


def ms_stats(seconds: list[float]) -> dict[str, float]:
    ms = [s * 1000 for s in seconds]
    return {"p50_ms": round(percentile(ms, 50), 3), "p95_ms": round(percentile(ms, 95), 3),
            "mean_ms": round(statistics.fmean(ms), 3)}


def make_clip(folder: Path, frames: int) -> Path:
    path = folder / "bench-720p-h264.mp4"
    subprocess.run(["ffmpeg", "-hide_banner", "-loglevel", "error", "-y", "-f", "lavfi", "-i",
                    f"testsrc2=size=1280x720:rate=30", "-frames:v", str(frames), "-c:v",
                    "libx264", "-preset", "veryfast", "-pix_fmt", "yuv420p", "-g", "250",
                    "-bf", "3", str(path)], check=True, timeout=600)
    return path


def sequential_digests(path: Path) -> list[str]:
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG)
    out = []
    while True:
        ok, f = cap.read()
        if not ok:
            break
        out.append(digest(f))
    cap.release()
    return out


def cpu_seconds() -> float:
    """User + system CPU of this process, every thread (the decoders' too)."""
    ru = resource.getrusage(resource.RUSAGE_SELF)
    return ru.ru_utime + ru.ru_stime


def raw_read_rate(path: Path) -> tuple[float, float]:
    """Frames per second of a raw ``read()`` loop, and CPU seconds per frame."""
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG)
    t, c = time.perf_counter(), cpu_seconds()
    n = 0
    while cap.read()[0]:
        n += 1
    dt, dc = time.perf_counter() - t, cpu_seconds() - c
    cap.release()
    return n / dt, dc / n


def naive_random(path: Path, indices: list[int], ref: list[str]) -> dict:
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG)
    times, exact = [], 0
    for i in indices:
        t = time.perf_counter()
        cap.set(cv2.CAP_PROP_POS_FRAMES, i)
        ok, f = cap.read()
        times.append(time.perf_counter() - t)
        exact += bool(ok) and digest(f) == ref[i]
    cap.release()
    return {**ms_stats(times), "exact_fraction": exact / len(indices)}


def ours_random(path: Path, indices: list[int], ref: list[str], index_dir: Path) -> dict:
    with open_video(path, index_cache_dir=index_dir) as v:
        t = time.perf_counter()
        v.wait_index()
        index_s = time.perf_counter() - t
        cold, exact = [], 0
        for i in indices:
            t = time.perf_counter()
            f = v.frame(i)
            cold.append(time.perf_counter() - t)
            exact += digest(f) == ref[i]
        # Revisit the frames the cache still holds (the budget may not fit every sample).
        revisit = [i for i in reversed(indices) if i in v.cache]
        cached = []
        for i in revisit:
            t = time.perf_counter()
            f = v.frame(i)
            cached.append(time.perf_counter() - t)
            exact += digest(f) == ref[i]
        return {"cold": ms_stats(cold), "cached": ms_stats(cached),
                "revisited_in_cache": len(revisit), "cache_budget_bytes": v.cache.budget,
                "exact_fraction": exact / (len(indices) + len(revisit)), "seeks": v.stats["seeks"],
                "reopen_fallbacks": v.stats["reopens"], "index_wait_s": round(index_s, 3),
                "frame_count": v.frame_count, "keyframes": v.index.keyframes.tolist()}


def ours_stepping(path: Path, ref: list[str], index_dir: Path, budget: int | None = None) -> dict:
    with open_video(path, cache_bytes=budget, index_cache_dir=index_dir) as v:
        v.wait_index()
        n = v.frame_count
        t, c = time.perf_counter(), cpu_seconds()
        for i in range(n):
            v.frame(i)
        dt, dc = time.perf_counter() - t, cpu_seconds() - c
        # Exactness of stepping, checked after the timed loop on a fresh pass.
        v.cache.clear()
        exact = sum(digest(v.frame(i)) == ref[i] for i in range(n)) / n
    return {"fps": round(n / dt, 1), "cpu_per_frame": dc / n, "exact_fraction": exact}


def first_frame(path: Path, tmp: Path, repeats: int = 3) -> dict:
    times, ready = [], []
    for r in range(repeats):
        t = time.perf_counter()
        v = open_video(path, index_cache_dir=tmp / f"fresh-index-{r}")
        v.frame(0)
        times.append(time.perf_counter() - t)
        ready.append(v.index_ready)
        v.close()
    return {"seconds_median": round(statistics.median(times), 4),
            "seconds_max": round(max(times), 4), "index_ready_at_first_frame": any(ready)}


def memory_traced(path: Path, budget: int, index_dir: Path) -> dict:
    tracemalloc.start()
    base = tracemalloc.get_traced_memory()[0]
    with open_video(path, cache_bytes=budget, index_cache_dir=index_dir) as v:
        v.wait_index()
        n = v.frame_count
        for i in range(n):
            v.frame(i)
        for i in random.Random(1).sample(range(n), 40):
            v.frame(i)
        frame_bytes = v.frame(0).nbytes
        cache_peak = v.cache.nbytes
    peak = tracemalloc.get_traced_memory()[1] - base
    tracemalloc.stop()
    return {"budget_bytes": budget, "frame_bytes": frame_bytes,
            "tracemalloc_peak_bytes": peak, "cache_bytes_at_end": cache_peak,
            "peak_over_budget_in_frames": round((peak - budget) / frame_bytes, 2)}


def memory_child(path: Path, budget: int, index_dir: Path) -> dict:
    out = subprocess.run([sys.executable, __file__, "--memory-child", str(path), str(budget),
                          str(index_dir)], check=True, capture_output=True, text=True,
                         timeout=600)
    return json.loads(out.stdout)


def _peak_rss() -> int:
    """Peak resident set of this process in bytes: VmHWM on Linux (reset by exec, unlike
    ru_maxrss, which a child inherits from its parent), else ru_maxrss."""
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) * 1024
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024


def _child(path: str, budget: int, index_dir: str) -> None:
    before = _peak_rss()
    with open_video(path, cache_bytes=budget, index_cache_dir=index_dir) as v:
        v.wait_index()
        for i in range(v.frame_count):
            v.frame(i)
        frame_bytes = v.frame(0).nbytes
    after = _peak_rss()
    print(json.dumps({"budget_bytes": budget, "vmhwm_bytes": after,
                      "vmhwm_growth_bytes": after - before, "frame_bytes": frame_bytes}))


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--frames", type=int, default=300)
    ap.add_argument("--samples", type=int, default=50)
    ap.add_argument("--memory-child", nargs=3)
    ap.add_argument("--long-minutes", type=float, default=10.0)
    ap.add_argument("--long-child", nargs=2, metavar=("WHO", "PATH"))
    args = ap.parse_args()
    if args.memory_child:
        _child(args.memory_child[0], int(args.memory_child[1]), args.memory_child[2])
        return
    if args.long_child:
        from bench_media_long import memory_child as long_child
        long_child(*args.long_child)
        return
    if shutil.which("ffmpeg") is None:
        print(json.dumps({"error": "ffmpeg not on PATH"}))
        sys.exit(1)
    with tempfile.TemporaryDirectory(prefix="bench-media-") as tmp_s:
        tmp = Path(tmp_s)
        t = time.perf_counter()
        path = make_clip(tmp, args.frames)
        encode_s = time.perf_counter() - t
        ref = sequential_digests(path)
        indices = random.Random(0).sample(range(len(ref)), args.samples)
        index_dir = tmp / "index"
        result: dict = {"clip": {"size": "1280x720", "codec": "h264", "gop": 250, "bframes": 3,
                                 "frames": len(ref), "encode_s": round(encode_s, 2)}}
        result["first_frame"] = first_frame(path, tmp)
        result["naive_seek"] = naive_random(path, indices, ref)
        result["ours_random"] = ours_random(path, indices, ref, index_dir)
        # The machine is shared: interleave the runs and keep the best of three of each.
        budget = 64 * 1024 * 1024
        raws, steps, small = [], [], []
        for _ in range(3):
            raws.append(raw_read_rate(path))
            steps.append(ours_stepping(path, ref, index_dir))
            small.append(ours_stepping(path, ref, index_dir, budget))
        raw = max(r for r, _ in raws)
        best = max(s["fps"] for s in steps)
        best_small = max(s["fps"] for s in small)
        raw_cpu = min(c for _, c in raws)  # CPU per frame: the least of three, as fps the most
        result["stepping"] = {
            "raw_read_fps": round(raw, 1), "ours_fps_default_cache": best,
            "ratio_default_cache": round(best / raw, 3),
            "ours_fps_64MiB_cache": best_small, "ratio_64MiB_cache": round(best_small / raw, 3),
            "ratio": round(best / raw, 3),
            "cpu_ratio_default_cache": round(raw_cpu / min(s["cpu_per_frame"] for s in steps), 3),
            "cpu_ratio_64MiB_cache": round(raw_cpu / min(s["cpu_per_frame"] for s in small), 3),
            "exact_fraction": min(s["exact_fraction"] for s in steps + small)}
        result["memory"] = {"traced": memory_traced(path, budget, index_dir),
                            "child_rss": memory_child(path, budget, index_dir)}
        r, s, m = result["ours_random"], result["stepping"], result["memory"]["traced"]
        result["goals"] = {
            "exact_100pct": r["exact_fraction"] == 1.0 and s["exact_fraction"] == 1.0,
            "cold_p50_not_slower_than_naive": r["cold"]["p50_ms"] <= result["naive_seek"]["p50_ms"],
            "cached_under_1ms": r["cached"]["p95_ms"] < 1.0,
            "stepping_ge_0.9x_raw": s["ratio"] >= 0.9,
            "first_frame_under_0.3s": result["first_frame"]["seconds_max"] < 0.3,
            "memory_bounded_by_budget": m["tracemalloc_peak_bytes"]
            <= m["budget_bytes"] + 4 * m["frame_bytes"],
        }
        if args.long_minutes > 0:
            from bench_media_long import long_cases
            result["long"] = long_cases(args.long_minutes, tmp)
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main()
