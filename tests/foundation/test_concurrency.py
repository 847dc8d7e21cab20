"""Several processes writing one SQLite project at once lose nothing."""

from __future__ import annotations

import multiprocessing as mp

from clipscribe import Project


def _writer(folder: str, who: str, n: int, q) -> None:
    acked = []
    with Project.open(folder, user=who) as p:
        for i in range(n):
            acked.append(p.add_caption(1 + i % 3, who, f"{who} caption {i}"))
    q.put((who, acked))


def test_processes_write_at_once(project):
    folder, n, people = str(project.folder), 60, ["ann-a", "ann-b", "lead"]
    ctx = mp.get_context("spawn")
    q = ctx.Queue()
    procs = [ctx.Process(target=_writer, args=(folder, who, n, q)) for who in people]
    for pr in procs:
        pr.start()
    results = dict(q.get(timeout=120) for _ in procs)
    for pr in procs:
        pr.join(timeout=60)
        assert pr.exitcode == 0
    rows = project.caption_rows()
    assert len(rows) == n * len(people)
    assert len({r.id for r in rows}) == len(rows)
    by_id = {r.id: r for r in rows}
    for who, ids in results.items():
        assert sorted(by_id[i].text for i in ids) == sorted(f"{who} caption {i}" for i in range(n))
