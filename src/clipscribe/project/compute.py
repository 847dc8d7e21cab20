"""Precomputing media work for many clips on worker processes (issue: large archives).

The client (this service) decides what each clip still needs, sends paths and numbers to the
workers of :mod:`clipscribe.cluster`, and alone writes what comes back to the project database,
in batched transactions. Cache files are written by the engines' functions on the workers, to
the cache folder named here (by default each machine's per-user cache; give a folder on shared
storage when workers run on other machines).
"""

from __future__ import annotations

import os
import threading
import time
from collections.abc import Callable, Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any

from sqlalchemy import update
from sqlalchemy.orm import Session

from ..errors import RecordError
from ..store.models import Clip
from ..types import ClipInfo, ClipRef, ComputeReport
from .context import Service

Progress = Callable[[int, int], None] | None
Cancel = threading.Event | Callable[[], bool] | None
PathMapLike = Any  # PathMap, {client prefix: worker prefix}, or ["CLIENT=WORKER", ...]
#: results written to the database per transaction, at the latest
WRITE_EVERY = 64
#: ... or after this many seconds since the last write, whichever comes first
WRITE_SECONDS = 2.0


def parse_kinds(what: str | Sequence[str] | None) -> tuple[str, ...]:
    """The kinds of work asked for, in the canonical order; RecordError naming an unknown one."""
    from ..cluster import KINDS
    if what is None:
        return KINDS
    items = [w.strip() for w in (what.split(",") if isinstance(what, str) else what) if w.strip()]
    unknown = [w for w in items if w not in KINDS]
    if unknown or not items:
        raise RecordError(f"compute: no kind of work {', '.join(map(repr, unknown)) or 'given'}; "
                          f"kinds are {', '.join(KINDS)}")
    return tuple(k for k in KINDS if k in items)


def path_map_of(value: PathMapLike):
    from ..cluster import PathMap
    if value is None:
        return PathMap()
    if isinstance(value, PathMap):
        return value
    if isinstance(value, Mapping):
        return PathMap(tuple((str(k), str(v)) for k, v in value.items()))
    try:
        return PathMap.parse(value)
    except ValueError as exc:
        raise RecordError(str(exc)) from None


class Compute(Service):
    def compute(self, what: str | Sequence[str] | None = None, *,
                clips: Iterable[ClipRef] | None = None, group: str | None = None,
                workers: int | None = None, scheduler: str | None = None,
                path_map: PathMapLike = None, cache_dir: str | os.PathLike | None = None,
                progress: Progress = None, cancel: Cancel = None) -> ComputeReport:
        from ..cluster import CacheFolders, ClipTask, is_done, run_tasks, work_on_clip
        t0 = time.perf_counter()
        kinds = parse_kinds(what)
        mapping = path_map_of(path_map)
        if "fingerprint" in kinds:
            self.ctx.check_lead("record clip fingerprints")
        rows = self._clips(clips, group)
        client_cache = CacheFolders(None if cache_dir is None else os.fspath(cache_dir))
        worker_cache = None if cache_dir is None else mapping.to_worker(cache_dir)
        report = ComputeReport(what=kinds, clips=len(rows))
        tasks, where = [], {}
        for c in rows:
            key = _index_key(self.ctx.media_root / c.path) if "index" in kinds else None
            need = tuple(k for k in kinds
                         if not is_done(k, c.sha256, c.fingerprint, client_cache, index_key=key))
            if not need:
                report.already_done += 1
                continue
            where[c.id] = c.path
            tasks.append(ClipTask(c.id, mapping.to_worker(self.ctx.media_root / c.path),
                                  c.sha256, c.frame_count, need, worker_cache))
        writer = _Writer(self, report)

        def arrived(task: Any, result: Any, reason: str | None) -> None:
            if result is None:
                report.failed.append((where[task.clip_id], reason or "failed"))
            else:
                if result.failed:
                    report.failed.append((where[task.clip_id], _reasons(result.failed)))
                else:
                    report.computed += 1
                for k in task.kinds:
                    if k not in result.failed:
                        report.by_kind[k] = report.by_kind.get(k, 0) + 1
                if result.fingerprint is not None:
                    writer.add(task.clip_id, result.fingerprint)
            writer.tick()
            if progress is not None:
                progress(report.computed + len(report.failed), len(tasks))

        if progress is not None:
            progress(0, len(tasks))
        try:
            if tasks:
                report.ran_on = run_tasks(work_on_clip, tasks, arrived, workers=workers,
                                          scheduler=scheduler, cancel=cancel)
        finally:
            writer.flush()  # what arrived before a cancel or a fault is kept
        report.seconds = time.perf_counter() - t0
        return report

    def _clips(self, clips: Iterable[ClipRef] | None, group: str | None) -> list[ClipInfo]:
        rows = self.peers.catalog.clips(group=group)
        if clips is None:
            return rows
        ids = set(self.ctx.read(lambda s: [self.ctx.clip(s, ref).id for ref in clips]))
        return [c for c in rows if c.id in ids]

    def probe_files(self, paths: Sequence[Path], on_facts: Callable[[list[tuple[Path, Any]]], None],
                    *, workers: int | None = None, scheduler: str | None = None,
                    path_map: PathMapLike = None, cache_dir: str | os.PathLike | None = None,
                    progress: Progress = None) -> str:
        """Probe, hash and index ``paths`` on workers; hand the facts to ``on_facts`` in batches
        of ``(path, FileFacts)`` as they arrive (a batch is written in one transaction)."""
        from ..cluster import FileTask, probe_file, run_tasks
        mapping = path_map_of(path_map)
        cache = None if cache_dir is None else mapping.to_worker(cache_dir)
        tasks = [FileTask(str(i), mapping.to_worker(p), cache) for i, p in enumerate(paths)]
        batch: list[tuple[int, Any]] = []
        seen = [0]
        last = [time.monotonic()]

        def flush() -> None:
            if batch:  # in the order of ``paths`` within a batch
                on_facts([(paths[i], facts) for i, facts in sorted(batch, key=lambda b: b[0])])
                batch.clear()
            last[0] = time.monotonic()

        def arrived(task: Any, facts: Any, reason: str | None) -> None:
            from ..cluster import FileFacts
            batch.append((int(task.key), facts or FileFacts(task.key, problem=reason)))
            seen[0] += 1
            if len(batch) >= WRITE_EVERY or time.monotonic() - last[0] > WRITE_SECONDS:
                flush()
            if progress is not None:
                progress(seen[0], len(tasks))
        if not tasks:  # no cluster started for nothing
            return ""
        try:
            return run_tasks(probe_file, tasks, arrived, workers=workers, scheduler=scheduler)
        finally:
            flush()


class _Writer:
    """Fingerprints that came back, written in batches (one transaction each); the time spent
    writing is added to the report."""

    def __init__(self, svc: Compute, report: ComputeReport) -> None:
        self.svc, self.report = svc, report
        self.rows: list[dict[str, int]] = []
        self.last = time.monotonic()

    def add(self, clip_id: int, value: int) -> None:
        signed = value - (1 << 64) if value >= (1 << 63) else value
        self.rows.append({"id": clip_id, "fingerprint": signed})

    def tick(self) -> None:
        if len(self.rows) >= WRITE_EVERY or time.monotonic() - self.last > WRITE_SECONDS:
            self.flush()

    def flush(self) -> None:
        self.last = time.monotonic()
        if not self.rows:
            return
        rows, self.rows = self.rows, []
        t0 = time.perf_counter()

        def work(s: Session) -> None:
            self.svc.ctx.lead_only(s, "record clip fingerprints")
            s.execute(update(Clip), rows)
        self.svc.ctx.write(work)
        self.report.write_seconds += time.perf_counter() - t0


def _reasons(failed: dict[str, str]) -> str:
    """One line for a clip's failed kinds: each reason once, with the kinds it stopped."""
    by_reason: dict[str, list[str]] = {}
    for kind, why in failed.items():
        by_reason.setdefault(why, []).append(kind)
    return "; ".join(f"{why} ({', '.join(kinds)})" for why, kinds in by_reason.items())


def _index_key(path: Any) -> str | None:
    """The media engine's cache key of the file's frame index; None when the file cannot be
    read here (the worker reports why)."""
    from ..media.index import index_key
    try:
        return index_key(path)
    except OSError:
        return None
