"""Import speed: 100,000 labels and 100,000 captions from JSON Lines, on SQLite (and on a
throwaway PostgreSQL server when its binaries are installed), beside a bare executemany of the
same rows in the same run, while another process saves a caption every 50 ms through the
façade. Prints JSON: records/s, seconds checking and writing, the ratio to the bare
executemany, and the longest time the other writer waited for one save.

The clips are rows only (no media files): labels and captions do not read the media.

usage: python benchmarks/bench_import.py [--records N] [--no-postgres]
"""

from __future__ import annotations

import argparse
import datetime as dt
import json
import os
import shutil
import sqlite3
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT / "src"), str(ROOT / "tests")]

from clipscribe import Project  # noqa: E402
from clipscribe.store.models import Clip  # noqa: E402

LABELS = ["pick up", "put down", "stack"]
PEOPLE = [f"ann-{i}" for i in range(10)]
WRITER_PERIOD = 0.05
WRITER_PASSWORD = "writer-" + os.urandom(4).hex()


def setup(p: Project, n: int) -> None:
    """Labels, ten annotators, the other writer (with a login on a server), n / 10 clip rows."""
    p.define_labels(LABELS)
    for name in PEOPLE:
        p.add_annotator(name)
    p.add_annotator("writer", password=WRITER_PASSWORD if p.is_server else None)
    clips = n // len(PEOPLE)
    p._write(lambda s: s.add_all([
        Clip(path=f"g{i % 50}/c{i:06d}.mp4", sha256=f"{i:064x}", fps=25.0, frame_count=250,
             duration=10.0, width=640, height=480) for i in range(clips)]))


def files(folder: Path, n: int) -> dict[str, Path]:
    clips = n // len(PEOPLE)
    out = {"labels": folder / "labels.jsonl", "captions": folder / "captions.jsonl"}
    with open(out["labels"], "w", encoding="utf-8") as f:
        for i in range(clips):
            for j, who in enumerate(PEOPLE):
                f.write(json.dumps({"type": "label", "clip": f"g{i % 50}/c{i:06d}.mp4",
                                    "annotator": who, "label": LABELS[(i + j) % 3]}) + "\n")
    with open(out["captions"], "w", encoding="utf-8") as f:
        for i in range(clips):
            for who in PEOPLE:
                f.write(json.dumps({"type": "caption", "clip": str(i + 1), "annotator": who,
                                    "text": f"the arm lifts block {i} and puts it down "
                                            f"beside the cup ({who})"}) + "\n")
    return out


def bare_rows(kind: str, n: int, ids: dict[str, int]) -> tuple[str, list[tuple]]:
    """The rows an import of ``kind`` writes to its own table, for a bare executemany."""
    clips = n // len(PEOPLE)
    now = dt.datetime.now(dt.timezone.utc).isoformat(" ")
    people = [ids[w] for w in PEOPLE]
    if kind == "labels":
        return ("INSERT INTO clip_labels (clip_id, annotator_id, label_id, updated_at, version) "
                "VALUES ({0}, {0}, {0}, {0}, 1)",
                [(i + 1, a, 1 + (i + j) % 3, now) for i in range(clips) for j, a in enumerate(people)])
    return ("INSERT INTO captions (clip_id, annotator_id, position, text, segment_id, updated_at, "
            "version) VALUES ({0}, {0}, 0, {0}, NULL, {0}, 1)",
            [(i + 1, a, f"the arm lifts block {i} and puts it down beside the cup ({w})", now)
             for i in range(clips) for w, a in zip(PEOPLE, people)])


def bare_sqlite(db: Path, kind: str, n: int, ids: dict[str, int]) -> float:
    """Seconds for one bare sqlite3 executemany + commit of the rows, on a copy of the file."""
    copy = db.with_name(f"bare-{kind}.sqlite")
    with sqlite3.connect(db) as src, sqlite3.connect(copy) as dst:  # the WAL's pages too
        src.backup(dst)
    sql, rows = bare_rows(kind, n, ids)
    conn = sqlite3.connect(copy, isolation_level=None)
    conn.execute("PRAGMA journal_mode = WAL")
    conn.execute("PRAGMA synchronous = NORMAL")
    t = time.perf_counter()
    conn.execute("BEGIN IMMEDIATE")
    conn.executemany(sql.format("?"), rows)
    conn.execute("COMMIT")
    took = time.perf_counter() - t
    conn.close()
    copy.unlink()
    return took


def bare_postgres(p: Project, kind: str, n: int, ids: dict[str, int]) -> float:
    """Seconds for one bare psycopg executemany of the rows (rolled back afterwards)."""
    import psycopg
    u = p.engine.url
    sql, rows = bare_rows(kind, n, ids)
    with psycopg.connect(host=u.host, port=u.port, dbname=u.database, user=u.username) as conn:
        t = time.perf_counter()
        with conn.cursor() as cur:
            cur.executemany(sql.format("%s"), rows)
        took = time.perf_counter() - t
        conn.rollback()
    return took


def timed_import(p: Project, path: Path, n: int) -> dict:
    """Import ``path``; seconds checking (before the write) and writing, from the progress."""
    marks: dict[str, float] = {}

    def progress(done: int, total: int) -> None:
        if done > total // 2 and "write" not in marks:
            marks["write"] = time.perf_counter()
    t0 = time.perf_counter()
    counts = p.import_records(path, progress=progress)
    took = time.perf_counter() - t0
    written = counts.get("label", 0) + counts.get("caption", 0)
    assert written == n, counts
    start = marks.get("write", t0)
    return {"records": n, "seconds": round(took, 2), "records_per_s": round(n / took),
            "checking_s": round(start - t0, 2), "writing_s": round(t0 + took - start, 2)}


def start_writer(folder: Path, out: Path) -> subprocess.Popen:
    env = dict(os.environ, PYTHONPATH=str(ROOT / "src"), CLIPSCRIBE_PASSWORD=WRITER_PASSWORD)
    return subprocess.Popen([sys.executable, __file__, "--writer", str(folder), str(out)], env=env)


def writer(folder: str, out: str) -> None:
    """Save a caption every 50 ms until ``out + '.stop'`` appears; write the waits to ``out``."""
    stop = Path(out + ".stop")
    waits, errors = [], []
    with Project.open(folder, user="writer", password=os.environ.get("CLIPSCRIBE_PASSWORD")) as p:
        Path(out + ".ready").touch()
        i = 0
        while not stop.exists():
            t = time.perf_counter()
            try:
                p.add_caption(1, "writer", f"saved while importing, number {i}")
            except Exception as exc:  # noqa: BLE001 - a refusal is what the benchmark reports
                errors.append(f"{type(exc).__name__}: {exc}"[:200])
            waits.append(time.perf_counter() - t)
            i += 1
            time.sleep(WRITER_PERIOD)
    Path(out).write_text(json.dumps({"saves": len(waits), "max_wait_s": round(max(waits), 3),
                                     "errors": errors[:3], "refused": len(errors)}))


def run(p: Project, folder: Path, n: int, bare) -> dict:
    paths = files(folder.parent, n)
    ids = {a.name: a.id for a in p.annotators()}
    result = {}
    for kind in ("labels", "captions"):
        bare_s = bare(kind, n, ids)
        out = folder.parent / f"writer-{kind}.json"
        proc = start_writer(folder, out)
        while not Path(str(out) + ".ready").exists():
            if proc.poll() is not None:
                raise SystemExit("the writer process ended early")
            time.sleep(0.05)
        time.sleep(0.3)  # a few saves before the import starts
        res = timed_import(p, paths[kind], n)
        time.sleep(0.3)
        Path(str(out) + ".stop").touch()
        proc.wait(timeout=120)
        res["bare_executemany_s"] = round(bare_s, 3)
        res["bare_records_per_s"] = round(n / bare_s)
        res["import_s_over_bare_s"] = round(res["seconds"] / bare_s, 1)
        res["other_writer"] = json.loads(out.read_text())
        result[kind] = res
    return result


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--records", type=int, default=100_000)
    ap.add_argument("--no-postgres", action="store_true")
    ap.add_argument("--writer", nargs=2, help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.writer:
        writer(*args.writer)
        return
    n = args.records
    tmp = Path(tempfile.mkdtemp(prefix="bench-import-"))
    result: dict = {"records": n, "cores": os.cpu_count(),
                    "load_before": [round(x, 2) for x in os.getloadavg()]}
    try:
        folder = tmp / "sqlite" / "p"
        with Project.create(folder, user="lead") as p:
            setup(p, n)
            db = folder / "project.sqlite"
            result["sqlite"] = run(p, folder, n, lambda k, n, ids: bare_sqlite(db, k, n, ids))
        from team.pg_cluster import ADMIN_PASSWORD, Cluster, find_bin
        if args.no_postgres:
            result["postgres"] = "skipped (--no-postgres)"
        elif find_bin() is None:
            result["postgres"] = "skipped: no PostgreSQL binaries under /usr/lib/postgresql/*/bin"
        else:
            cluster = Cluster(fast=False).start()
            os.environ["PGPASSFILE"] = str(cluster.pgpass)
            try:
                url = cluster.new_database().replace("@", f":{ADMIN_PASSWORD}@", 1)
                folder = tmp / "pg" / "p"
                with Project.create(folder, database_url=url, user="boss") as p:
                    setup(p, n)
                    result["postgres"] = run(p, folder, n, lambda k, n, ids: bare_postgres(p, k, n, ids))
                    result["postgres"]["server"] = "throwaway PostgreSQL, fsync and synchronous_commit on, same machine"
            finally:
                cluster.stop()
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    result["load_after"] = [round(x, 2) for x in os.getloadavg()]
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main()
