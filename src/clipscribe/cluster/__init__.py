"""Per-clip media work handed to worker processes: on a Dask cluster, on a local cluster of
processes, or in this process. Workers get paths and numbers, run the Qt-free, database-free
functions of :mod:`clipscribe.media` and :mod:`clipscribe.features` (which write their cache files,
keyed by content hash, to the cache folder) and send back small results; the caller alone writes
to the project database. Dask is imported only when a cluster is used."""

from .paths import PathMap
from .runner import DaskMissing, default_workers, run_tasks
from .tasks import (KINDS, CacheFolders, ClipResult, ClipTask, FileFacts, FileTask, is_done,
                    probe_file, work_on_clip)

__all__ = [
    "KINDS", "CacheFolders", "ClipResult", "ClipTask", "DaskMissing", "FileFacts", "FileTask",
    "PathMap", "default_workers", "is_done", "probe_file", "run_tasks", "work_on_clip",
]
