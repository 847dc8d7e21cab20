"""Edits per second with 8 writers at once versus 1 writer, on PostgreSQL and on SQLite.

Each writer is its own process going through the façade (``tests/team/writer.py``: four
captions then a label change, repeated), on PostgreSQL each with its own login. The server is
a throwaway one started here with durable settings (fsync and synchronous_commit on). Prints
JSON; the ratio 8:1 says how far concurrency scales on this machine.

usage: python benchmarks/bench_team.py [--edits N]
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT / "src"), str(ROOT / "tests")]

from clipscribe import Project  # noqa: E402
from team.conftest import add_clips  # noqa: E402
from team.pg_cluster import ADMIN_PASSWORD, Cluster, find_bin  # noqa: E402

WRITER = ROOT / "tests" / "team" / "writer.py"


def run_writers(folder: Path, people: list[tuple[str, str]], n: int) -> dict:
    env = dict(os.environ, PYTHONPATH=str(ROOT / "src"))
    procs = [subprocess.Popen([sys.executable, str(WRITER), str(folder), u, pw, str(n)],
                              stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
             for u, pw in people]
    starts, ends = [], []
    for proc in procs:
        out, err = proc.communicate()
        if proc.returncode:
            raise SystemExit(err)
        t0, t1 = next(l for l in out.splitlines() if l.startswith("timing")).split()[1:]
        starts.append(float(t0))
        ends.append(float(t1))
    wall = max(ends) - min(starts)
    total = n * len(people)
    return {"writers": len(people), "edits": total, "seconds": round(wall, 3),
            "edits_per_s": round(total / wall, 1)}


def bench(make, n: int) -> dict:
    out = {}
    for writers in (1, 8):
        folder, people = make(writers)
        out[f"writers_{writers}"] = run_writers(folder, people, n)
    out["ratio_8_to_1"] = round(out["writers_8"]["edits_per_s"] / out["writers_1"]["edits_per_s"], 2)
    return out


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--edits", type=int, default=300, help="edits per writer")
    args = ap.parse_args()
    tmp = Path(tempfile.mkdtemp(prefix="bench-team-"))
    result = {"edits_per_writer": args.edits, "cores": os.cpu_count(),
              "load_before": [round(x, 2) for x in os.getloadavg()]}

    def sqlite(writers: int):
        folder = tmp / f"sqlite-{writers}"
        with Project.create(folder, user="boss") as p:
            p.define_labels(["pick up", "put down", "stack"])
            add_clips(p, 10)
            people = [(f"s{i}", "") for i in range(writers)]
            for name, _ in people:
                p.add_annotator(name)
        return folder, people

    result["sqlite"] = bench(sqlite, args.edits)
    if find_bin() is None:
        result["postgres"] = "skipped: no PostgreSQL binaries under /usr/lib/postgresql/*/bin"
    else:
        cluster = Cluster(fast=False).start()
        os.environ["PGPASSFILE"] = str(cluster.pgpass)
        try:
            def server(writers: int):
                url = cluster.new_database().replace("@", f":{ADMIN_PASSWORD}@", 1)
                folder = tmp / f"pg-{writers}"
                tag = os.urandom(3).hex()
                with Project.create(folder, database_url=url, user="boss") as p:
                    p.define_labels(["pick up", "put down", "stack"])
                    add_clips(p, 10)
                    people = [(f"w{i}_{tag}", f"pw{i}") for i in range(writers)]
                    for name, pw in people:
                        p.add_annotator(name, password=pw)
                return folder, people
            result["postgres"] = bench(server, args.edits)
            result["postgres"]["server"] = "PostgreSQL 15, fsync on, synchronous_commit on, same machine"
        finally:
            cluster.stop()
    result["load_after"] = [round(x, 2) for x in os.getloadavg()]
    print(json.dumps(result, indent=2))


if __name__ == "__main__":
    main()
