"""Benchmark of clip features and label suggestions. Prints one JSON object.

Run: PYTHONPATH=src python benchmarks/bench_features.py [--train-clips 5000]

Measured on one core (OpenCV and BLAS at one thread, CPU time by ``time.process_time``), side by
side in the same run:
- features of one invented 10-s 640x360 H.264 clip (25 fps; mp4v when FFmpeg is missing): the
  recipe clipscribe uses (DIS "fast" flow, frames scaled to 180 px) against Farnebaeck flow at
  the same size and against DIS at full resolution (budget <= 1 s);
- retraining the suggester on 5,000 clips of cached features, 100 labels (budget <= 5 s);
- the suggestion shown on a clip change: ranking one clip's cached features with the trained
  model (budget < 50 ms; the widget's repaint is not included).
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import cv2  # noqa: E402
import numpy as np  # noqa: E402

from clipscribe import features as F  # noqa: E402
from clipscribe.features import descriptors, models  # noqa: E402

BUDGETS = {"features_s": 1.0, "retrain_s": 5.0, "suggest_ms": 50.0}


def make_clip(folder: Path) -> Path:
    """10 s of an invented scene: a textured floor sliding left under a square moving right."""
    w, h, fps, n = 640, 360, 25, 250
    rng = np.random.default_rng(0)
    tex = cv2.resize(rng.integers(0, 255, (h // 8, (w + 2 * n) // 8, 3), dtype=np.uint8),
                     (w + 2 * n, h), interpolation=cv2.INTER_CUBIC)
    raw = folder / "clip.avi"
    out = cv2.VideoWriter(str(raw), cv2.VideoWriter_fourcc(*"MJPG"), fps, (w, h))
    for i in range(n):
        img = np.ascontiguousarray(tex[:, 2 * i:2 * i + w])
        x = 40 + 2 * i
        cv2.rectangle(img, (x, 120), (x + 80, 200), (40, 200, 240), -1)
        out.write(img)
    out.release()
    if shutil.which("ffmpeg"):
        target = folder / "clip.mp4"
        subprocess.run(["ffmpeg", "-loglevel", "error", "-y", "-i", str(raw), "-c:v", "libx264",
                        "-b:v", "1600k", "-pix_fmt", "yuv420p", str(target)], check=True)
        return target
    return raw


class _Farneback:
    def calc(self, prev, nxt, _flow):
        return cv2.calcOpticalFlowFarneback(prev, nxt, None, 0.5, 3, 15, 3, 5, 1.2, 0)


def cpu(fn, repeat: int = 3) -> float:
    best = float("inf")
    for _ in range(repeat):
        t = time.process_time()
        fn()
        best = min(best, time.process_time() - t)
    return best


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--train-clips", type=int, default=5000)
    ap.add_argument("--labels", type=int, default=100)
    args = ap.parse_args()
    cv2.setNumThreads(1)
    out: dict = {"budgets": BUDGETS}
    with tempfile.TemporaryDirectory() as tmp:
        clip = make_clip(Path(tmp))
        recipe = F.FeatureRecipe()
        out["clip"] = {"file": clip.name, "size": "640x360", "seconds": 10}
        out["features_s"] = cpu(lambda: F.compute_clip_features(clip, recipe))
        out["features_full_resolution_s"] = cpu(
            lambda: F.compute_clip_features(clip, F.FeatureRecipe(height=360)), 1)
        original = descriptors.flow_engine
        descriptors.flow_engine = _Farneback  # type: ignore[assignment]
        try:
            out["features_farneback_s"] = cpu(lambda: F.compute_clip_features(clip, recipe), 1)
        finally:
            descriptors.flow_engine = original
        cap = cv2.VideoCapture(str(clip))
        out["decode_only_s"] = cpu(lambda: [None for _ in iter(lambda: cap.grab(), False)], 1)
        cap.release()

    rng = np.random.default_rng(0)
    n, k = args.train_clips, args.labels
    y = np.array([f"label {i % k}" for i in range(n)])
    centres = {s: rng.normal(size=(k, d)) for s, d in
               (("appearance", F.APPEARANCE_DIMS), ("motion", F.MOTION_DIMS))}
    X = {s: centres[s][np.arange(n) % k] * 0.5 + rng.normal(size=(n, c.shape[1]))
         for s, c in centres.items()}
    groups = np.array([f"g{i % 400}" for i in range(n)])
    t = time.process_time()
    model = models.train(X, y, groups)
    out["retrain_s"] = time.process_time() - t
    out["retrain"] = {"clips": n, "labels": k, "groups": 400, "c": model.c,
                      "weight": model.weight}
    one = {s: X[s][0] for s in ("appearance", "motion")}
    t = time.perf_counter()
    for _ in range(20):
        model.ranked(one)
    out["suggest_ms"] = (time.perf_counter() - t) / 20 * 1000
    out["within_budget"] = {key: out[key] <= b for key, b in BUDGETS.items()}
    print(json.dumps(out, indent=2, default=float))


if __name__ == "__main__":
    sys.exit(main())
