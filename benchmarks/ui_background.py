"""UI-thread stalls while the thumbnail and motion jobs of a clip run.

A 10 ms timer beats on the UI thread while ``ClipJobs`` computes the thumbnail strip and the
motion curve of a generated 640x480 clip; the longest gap between beats is the longest stall a
person would feel. Beside it, the obvious alternative in the same run: the same two computations
called directly on the UI thread. Budget (docs/architecture.md, "Budgets"): no stall > 50 ms.

Run:  QT_QPA_PLATFORM=offscreen python benchmarks/ui_background.py [--runs 3]
Prints JSON. Timings depend on how busy the machine is: compare the two rows of one run.
"""

from __future__ import annotations

import argparse
import gc
import json
import statistics
import tempfile
import time
from pathlib import Path

import cv2
import numpy as np
from PySide6.QtCore import QTimer
from PySide6.QtWidgets import QApplication

from clipscribe.ui.workbench import jobs_view

HEARTBEAT_MS = 10


def make_clip(path: Path, seed: int, frames: int = 240, size: tuple[int, int] = (640, 480)) -> Path:
    """A moving square; ``seed`` changes the pixels so no cached result is reused."""
    out = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*"mp4v"), 25, size)
    for i in range(frames):
        img = np.full((size[1], size[0], 3), 90, np.uint8)
        x = 20 + (i * 5) % (size[0] - 120)
        cv2.rectangle(img, (x, 150), (x + 100, 250), (40, 200, 240), -1)
        cv2.putText(img, f"{seed}:{i}", (20, 60), cv2.FONT_HERSHEY_SIMPLEX, 2, (255, 255, 255), 3)
        out.write(img)
    out.release()
    return path


def beats_during(app: QApplication, work) -> dict:
    """Run ``work(done)`` with a heartbeat on the UI thread until ``done`` is called."""
    beats: list[float] = []
    finished: list[bool] = []
    timer = QTimer()
    timer.setInterval(HEARTBEAT_MS)
    timer.timeout.connect(lambda: beats.append(time.perf_counter()))
    gc.collect()
    t0 = time.perf_counter()
    timer.start()
    QTimer.singleShot(0, lambda: work(lambda: finished.append(True)))
    while not finished:
        app.processEvents()
        time.sleep(0.001)
    timer.stop()
    gaps = np.diff([t0, *beats, time.perf_counter()]) * 1000
    return {"seconds": round(time.perf_counter() - t0, 3), "beats": len(beats),
            "max_gap_ms": round(float(gaps.max()), 1), "p99_gap_ms": round(float(np.percentile(gaps, 99)), 1)}


def in_workers(clip: Path):
    def work(done):
        jobs = jobs_view.ClipJobs()
        left = {"thumbs", "motion"}

        def one(name):
            left.discard(name)
            if not left:
                done()
        jobs.thumbnailsReady.connect(lambda _v: one("thumbs"))
        jobs.curveReady.connect(lambda _v: one("motion"))
        jobs.failed.connect(lambda msg: (_ for _ in ()).throw(RuntimeError(msg)))
        work.jobs = jobs  # keep it alive
        jobs.start(clip)
    return work


def on_ui_thread(clip: Path):
    def work(done):
        never = lambda: False  # noqa: E731
        jobs_view._thumbs(clip, cancel=never, progress=lambda d, t: None)
        jobs_view._motion(clip, cancel=never, progress=lambda d, t: None)
        done()
    return work


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=3)
    args = ap.parse_args()
    app = QApplication.instance() or QApplication([])
    rows: dict[str, list[dict]] = {"workers": [], "ui_thread": []}
    with tempfile.TemporaryDirectory() as tmp:
        for run in range(args.runs):  # a new clip for each measurement: nothing comes from a cache
            rows["workers"].append(beats_during(app, in_workers(make_clip(Path(tmp) / f"w{run}.mp4", 2 * run))))
            rows["ui_thread"].append(beats_during(app, on_ui_thread(make_clip(Path(tmp) / f"u{run}.mp4", 2 * run + 1))))
    med = {k: statistics.median(r["max_gap_ms"] for r in v) for k, v in rows.items()}
    print(json.dumps({"heartbeat_ms": HEARTBEAT_MS, "runs": rows,
                      "median_max_gap_ms": med, "budget_ms": 50,
                      "ratio_ui_thread_over_workers": round(med["ui_thread"] / med["workers"], 1)},
                     indent=2))


if __name__ == "__main__":
    main()
