"""Benchmark of precomputing media work: one process against a local Dask cluster of worker
processes, on the same generated clips. Prints one JSON object.

Run: PYTHONPATH=src python benchmarks/bench_compute.py [--clips 200] [--workers 2]

Each run starts from a fresh copy of the same project and an empty cache folder and computes
every kind of work (frame index, thumbnails, motion curve, fingerprint, features). "1 process"
is ``clipscribe compute --workers 0`` (no Dask); the cluster run is ``--workers N`` and includes
starting and stopping the cluster. Also printed: the client's share of the time spent writing
to the project database, the CPU seconds each run used (this process and the worker processes)
and the machine's load average around each run. The goal on 2 cores is >= 1.7x; it can only
be met on an otherwise idle machine: Linux shares a busy CPU fairly between sessions
(autogroups), so when other sessions keep both cores busy, two worker processes get no more
CPU time than one.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import tempfile
import time
from pathlib import Path

import cv2
import numpy as np

from clipscribe import Project

GOAL = 1.7


def make_clip(path: Path, seed: int, frames: int = 48, size: tuple[int, int] = (192, 144)) -> None:
    """A textured square drifting over a noisy background (different per seed)."""
    rng = np.random.default_rng(seed)
    w, h = size
    back = cv2.resize(rng.integers(0, 255, (h // 8, w // 8, 3), dtype=np.uint8), (w, h))
    path.parent.mkdir(parents=True, exist_ok=True)
    out = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*"mp4v"), 25, (w, h))
    dx, dy = rng.integers(1, 4, 2)
    for i in range(frames):
        img = back.copy()
        x, y = (10 + dx * i) % (w - 40), (10 + dy * i) % (h - 40)
        cv2.rectangle(img, (int(x), int(y)), (int(x) + 40, int(y) + 40),
                      tuple(int(c) for c in rng.integers(0, 255, 3)), -1)
        out.write(img)
    out.release()


def run(master: Path, root: Path, name: str, workers: int) -> dict:
    folder = root / name
    shutil.copytree(master, folder)
    load_before = os.getloadavg()[0]
    cpu0 = _cpu()
    t0 = time.perf_counter()
    with Project.open(folder) as p:
        rep = p.compute(workers=workers, cache_dir=root / f"cache-{name}")
    wall = time.perf_counter() - t0
    cpu = _cpu() - cpu0
    assert rep.ok and rep.computed == rep.clips, rep.failed
    return {"ran_on": rep.ran_on, "seconds": round(wall, 2),
            "clips_per_s": round(rep.clips / wall, 2),
            "cpu_s": round(cpu, 2), "cpu_s_per_clip": round(cpu / rep.clips, 3),
            "db_write_s": round(rep.write_seconds, 3),
            "db_write_share": round(rep.write_seconds / wall, 4),
            "load_avg_1min_before": round(load_before, 2),
            "load_avg_1min_after": round(os.getloadavg()[0], 2)}


def _cpu() -> float:
    """CPU seconds of this process and of its finished child processes (the cluster's workers,
    once the cluster is stopped)."""
    me, kids = resource.getrusage(resource.RUSAGE_SELF), resource.getrusage(resource.RUSAGE_CHILDREN)
    return me.ru_utime + me.ru_stime + kids.ru_utime + kids.ru_stime


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--clips", type=int, default=200)
    ap.add_argument("--workers", type=int, default=2)
    args = ap.parse_args()
    root = Path(tempfile.mkdtemp(prefix="clipscribe-bench-compute-"))
    try:
        master = root / "master"
        with Project.create(master) as p:
            for i in range(args.clips):
                make_clip(p.media_root / f"g{i % 10}" / f"c{i:04d}.mp4", seed=i)
            p.add_media(p.media_root)
        one = run(master, root, "one", 0)
        many = run(master, root, "cluster", args.workers)
        speedup = many["clips_per_s"] / one["clips_per_s"]
        print(json.dumps({
            "benchmark": "compute", "clips": args.clips, "cpu_count": os.cpu_count(),
            "opencv_threads": cv2.getNumThreads(), "one_process": one,
            f"local_cluster_{args.workers}_workers": many,
            "speedup": round(speedup, 2), "goal": GOAL, "meets_goal": speedup >= GOAL,
        }, indent=2))
    finally:
        shutil.rmtree(root, ignore_errors=True)


if __name__ == "__main__":
    main()
