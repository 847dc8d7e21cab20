"""Running tasks: in this process, on a local cluster of worker processes, or on a Dask
scheduler somewhere else. Results are handed to the caller as they arrive, in any order.

Only a bounded number of tasks is submitted at a time (a few per worker thread), so a client
killed half-way has lost only those in flight, and a run over 100,000 clips holds little
memory. A worker process that dies takes its tasks with it; the scheduler gives them to another
worker, and a task that has killed workers several times (Dask's ``allowed-failures``) is
reported as failed rather than tried again. Retrying a task that raised is Dask's too
(``retries``).
"""

from __future__ import annotations

import logging
import os
import threading
from collections.abc import Callable, Iterable
from typing import Any, TypeVar

from ..errors import ProjectError
from ..media import JobCancelled

T = TypeVar("T")
#: ``on_result(task, result, reason)``: ``result`` is None when the task failed as a whole
OnResult = Callable[[Any, Any, str | None], None]
Cancel = threading.Event | Callable[[], bool] | None
#: tasks submitted per worker thread at a time
PER_THREAD = 4
INSTALL_HINT = ("Dask is not installed: pip install 'clipscribe[cluster]' (or compute in this "
                "process with 0 workers)")


class DaskMissing(ProjectError):
    """A cluster was asked for and Dask (``clipscribe[cluster]``) is not installed."""


def default_workers() -> int:
    """Worker processes of a local cluster when none are asked for: cores − 1, at least 1."""
    return max(1, (os.cpu_count() or 1) - 1)


def _stopped(cancel: Cancel) -> bool:
    if cancel is None:
        return False
    return cancel.is_set() if isinstance(cancel, threading.Event) else bool(cancel())


def describe_failure(exc: BaseException | None) -> str:
    """A task's failure as one line."""
    if exc is None:
        return "the task was lost"
    if type(exc).__name__ == "KilledWorker":
        return "a worker process died while working on it, every time it was tried"
    return f"{type(exc).__name__}: {exc}"


def run_tasks(fn: Callable[[T], Any], tasks: Iterable[T], on_result: OnResult, *,
              workers: int | None = None, scheduler: str | None = None, retries: int = 1,
              cancel: Cancel = None) -> str:
    """Run ``fn`` on every task and call ``on_result`` on this thread for each, as they finish.

    ``workers=0`` (and no ``scheduler``): in this process, one task after another, no Dask.
    ``scheduler``: connect to that Dask scheduler (``tcp://host:8786``) and use its workers.
    Otherwise a local cluster of ``workers`` processes (default :func:`default_workers`), one
    thread each, started for this run and stopped after it. Returns a description of where the
    work ran. ``cancel`` stops submitting, drops what is queued and raises JobCancelled.
    """
    if scheduler is None and workers == 0:
        for task in tasks:
            if _stopped(cancel):
                raise JobCancelled("computing: cancelled")
            try:
                result = fn(task)
            except Exception as exc:  # noqa: BLE001 - reported, the run goes on
                on_result(task, None, describe_failure(exc))
            else:
                on_result(task, result, None)
        return "in this process"
    if workers is not None and workers < 0:
        raise ValueError(f"workers must be 0 or more, got {workers}")
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise DaskMissing(INSTALL_HINT) from None
    if scheduler is not None:
        with Client(scheduler, timeout="30s") as client:
            _drive(client, fn, tasks, on_result, retries, cancel)
        return f"the Dask scheduler at {scheduler}"
    import dask
    n = workers or default_workers()
    with dask.config.set(worker_config(dask.config.get("distributed.nanny.pre-spawn-environ", {}))), \
            LocalCluster(n_workers=n, threads_per_worker=1, processes=True, dashboard_address=":0",
                         silence_logs=logging.ERROR) as cluster, Client(cluster) as client:
        _drive(client, fn, tasks, on_result, retries, cancel)
    return f"a local cluster of {n} worker process{'es' if n > 1 else ''}"


def worker_config(environ: dict[str, Any]) -> dict[str, Any]:
    """Dask settings for worker processes that decode video: one OpenCV thread each (the
    processes are the parallelism), no statistical profiler sampling the running task, and no
    ``MALLOC_TRIM_THRESHOLD_`` (the nanny's default of 64 KiB made the kernel return and fault
    in the frame buffers again and again: twice the system time here)."""
    env = {k: v for k, v in environ.items() if k != "MALLOC_TRIM_THRESHOLD_"}
    return {"distributed.nanny.pre-spawn-environ": {**env, "OPENCV_FOR_THREADS_NUM": 1},
            "distributed.worker.profile.enabled": False}


def _drive(client: Any, fn: Callable[[T], Any], tasks: Iterable[T], on_result: OnResult,
           retries: int, cancel: Cancel) -> None:
    from distributed import as_completed
    threads = sum(client.nthreads().values()) or 1
    window = max(4, PER_THREAD * threads)
    todo = iter(tasks)
    flying: dict[str, T] = {}
    queue = as_completed()

    def submit() -> bool:
        task = next(todo, None)
        if task is None or _stopped(cancel):
            return False
        fut = client.submit(fn, task, pure=False, retries=retries)
        flying[fut.key] = task
        queue.add(fut)
        return True

    for _ in range(window):
        if not submit():
            break
    # what is still queued when this returns or raises is dropped when the client closes
    for fut in queue:
        task = flying.pop(fut.key)
        if fut.status == "finished":
            on_result(task, fut.result(), None)
        else:
            on_result(task, None, describe_failure(fut.exception()))
        fut.release()
        if _stopped(cancel):
            raise JobCancelled("computing: cancelled")
        submit()
