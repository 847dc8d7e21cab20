"""Save one edit on SQLite: p50/p95 through the Project façade (own transaction, edit history,
optimistic version) beside a bare sqlite3 INSERT + COMMIT on the same kind of file. Prints JSON.

Budget (docs/architecture.md, "Budgets"): p95 < 10 ms per edit on SQLite.
"""

from __future__ import annotations

import json
import sqlite3
import statistics
import sys
import tempfile
import time
from pathlib import Path

import cv2
import numpy as np

from clipscribe import Project


def pct(xs: list[float], q: float) -> float:
    return round(float(np.percentile(np.asarray(xs) * 1000, q)), 3)


def main(n: int = 400) -> None:
    with tempfile.TemporaryDirectory(prefix="bench-store-") as tmp:
        root = Path(tmp)
        with Project.create(root / "p", user="lead") as p:
            p.define_labels(["pick up", "put down", "push"])
            p.add_annotator("ann")
            out = cv2.VideoWriter(str(p.media_root / "c.mp4"), cv2.VideoWriter_fourcc(*"mp4v"), 10, (64, 48))
            for i in range(20):
                out.write(np.full((48, 64, 3), i * 10, np.uint8))
            out.release()
            clip = p.add_clip(p.media_root / "c.mp4")
            timings: dict[str, list[float]] = {"set_clip_label": [], "add_caption": [], "update_caption": []}
            labels = ["pick up", "put down", "push"]
            cap = p.add_caption(clip, "ann", "first words of a caption")
            for i in range(n):
                t = time.perf_counter(); p.set_clip_label(clip, "ann", labels[i % 3])
                timings["set_clip_label"].append(time.perf_counter() - t)
                t = time.perf_counter(); p.add_caption(clip, "ann", f"The arm moves block {i}.")
                timings["add_caption"].append(time.perf_counter() - t)
                t = time.perf_counter(); p.update_caption(cap, f"The arm lifts block {i}.")
                timings["update_caption"].append(time.perf_counter() - t)
        con = sqlite3.connect(root / "raw.sqlite", isolation_level=None)
        con.execute("PRAGMA journal_mode=WAL"); con.execute("PRAGMA synchronous=NORMAL")
        con.execute("CREATE TABLE t (id INTEGER PRIMARY KEY, text TEXT)")
        raw = []
        for i in range(n):
            t = time.perf_counter()
            con.execute("BEGIN IMMEDIATE"); con.execute("INSERT INTO t (text) VALUES (?)", (f"c {i}",))
            con.execute("COMMIT")
            raw.append(time.perf_counter() - t)
        con.close()
    result = {k: {"p50_ms": pct(v, 50), "p95_ms": pct(v, 95)} for k, v in timings.items()}
    result["raw_sqlite_insert_commit"] = {"p50_ms": pct(raw, 50), "p95_ms": pct(raw, 95)}
    worst = max(r["p95_ms"] for k, r in result.items() if k != "raw_sqlite_insert_commit")
    result["facade_over_raw_p50"] = round(statistics.median(timings["add_caption"]) / statistics.median(raw), 1)
    result["goals"] = {"p95_under_10ms": worst < 10.0}
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 400)
