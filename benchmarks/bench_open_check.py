"""Opening a 100k-clip SQLite project: what the integrity check on open costs.

Builds a project with N clips (default 100,000), three annotators' labels on every clip and
five captions per clip (bulk inserts), then times, each as the median of several runs:
``PRAGMA quick_check`` alone, ``PRAGMA integrity_check`` (the thorough alternative), opening
the project without any check, and ``Project.open`` as shipped (which runs the check it
chose). Prints one JSON object.

Run: PYTHONPATH=src python benchmarks/bench_open_check.py [N]
"""

from __future__ import annotations

import json
import os
import shutil
import sqlite3
import statistics
import sys
import tempfile
import time
from pathlib import Path

from clipscribe import Project
from clipscribe.store.models import Caption, Clip, ClipLabel


def make_project(folder: Path, n: int) -> None:
    with Project.create(folder, user="lead") as p:
        p.define_labels(["pick up", "put down", "stack"])
        ids = [p.add_annotator(f"annotator-{i}") for i in range(1, 4)]
        labels = {l.name: l.id for l in p.labels()}
        with p.engine.begin() as conn:
            conn.execute(Clip.__table__.insert(), [
                dict(path=f"bulk/clip-{i:06d}.mp4", sha256=f"{i:064x}", fps=15.0, frame_count=60,
                     duration=4.0, width=320, height=240, group_key=f"g{i % 500:03d}", source=None,
                     licence=None, consent=True, state="new", fingerprint=None) for i in range(n)])
            conn.execute(ClipLabel.__table__.insert(), [
                dict(clip_id=c, annotator_id=a, label_id=list(labels.values())[(c + a) % 3])
                for c in range(1, n + 1) for a in ids])
            conn.execute(Caption.__table__.insert(), [
                dict(clip_id=c, annotator_id=ids[k % 3], position=k,
                     text=f"the arm lifts block {c} onto shelf {k} and lets it go")
                for c in range(1, n + 1) for k in range(5)])


def median_s(fn, runs: int = 5) -> float:
    out = []
    for _ in range(runs):
        t = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t)
    return statistics.median(out)


def pragma(path: Path, what: str) -> None:
    con = sqlite3.connect(path)
    try:
        assert con.execute(f"PRAGMA {what}").fetchone()[0] == "ok"
    finally:
        con.close()


def main() -> None:
    clips = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    scratch = Path(tempfile.mkdtemp(prefix="clipscribe-open-check-"))
    os.environ["XDG_CACHE_HOME"] = str(scratch / "cache")
    folder, t = scratch / "project", time.perf_counter()
    try:
        make_project(folder, clips)
        build_s, db = time.perf_counter() - t, folder / "project.sqlite"
        from clipscribe import project as project_mod

        def open_close() -> None:
            with Project.open(folder, user="lead"):
                pass

        def open_unchecked() -> None:
            saved = project_mod.check_sqlite_file
            project_mod.check_sqlite_file = lambda path: None
            try:
                open_close()
            finally:
                project_mod.check_sqlite_file = saved

        result = {
            "clips": clips, "db_bytes": db.stat().st_size, "build_s": round(build_s, 2),
            "quick_check_s": median_s(lambda: pragma(db, "quick_check")),
            "integrity_check_s": median_s(lambda: pragma(db, "integrity_check"), runs=3),
            "open_without_check_s": median_s(open_unchecked),
            "open_as_shipped_s": median_s(open_close),
        }
        result["check_cost_s"] = result["open_as_shipped_s"] - result["open_without_check_s"]
        result["quick_vs_integrity"] = result["quick_check_s"] / result["integrity_check_s"]
        print(json.dumps(result, indent=2))
    finally:
        shutil.rmtree(scratch, ignore_errors=True)


if __name__ == "__main__":
    main()
