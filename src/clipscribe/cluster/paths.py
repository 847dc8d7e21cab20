"""Path mapping between the machine that runs the client and the machines that run workers.

The same shared storage may be mounted at different places (``/mnt/videos`` here,
``/data/videos`` on the workers). A mapping is a list of ``(client prefix, worker prefix)`` pairs;
a path below a client prefix is sent with that prefix replaced (the longest matching prefix
wins); any other path is sent as it is. Prefixes match whole path components, so ``/mnt/v``
does not match ``/mnt/videos``.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from dataclasses import dataclass


def _clean(prefix: str) -> str:
    p = prefix.replace("\\", "/")
    return p if p == "/" else p.rstrip("/")


@dataclass(frozen=True)
class PathMap:
    """``(client prefix, worker prefix)`` pairs; empty means the same paths everywhere."""

    pairs: tuple[tuple[str, str], ...] = ()

    @classmethod
    def parse(cls, items: Iterable[str] | None) -> PathMap:
        """From ``CLIENT=WORKER`` strings (the command line's ``--map``); ValueError when an
        item has no ``=`` or an empty side."""
        pairs = []
        for item in items or ():
            client, sep, worker = item.partition("=")
            if not sep or not client.strip() or not worker.strip():
                raise ValueError(f"path mapping {item!r}: write it as CLIENT_PREFIX=WORKER_PREFIX")
            pairs.append((client.strip(), worker.strip()))
        return cls(tuple(pairs))

    def to_worker(self, path: str | os.PathLike) -> str:
        """The path a worker opens for the client's ``path``."""
        text = os.fspath(path)
        norm = text.replace("\\", "/")
        best: tuple[str, str] | None = None
        for client, worker in self.pairs:
            c = _clean(client)
            if norm == c or norm.startswith(c if c.endswith("/") else c + "/"):
                if best is None or len(c) > len(_clean(best[0])):
                    best = (client, worker)
        if best is None:
            return text
        rest = norm[len(_clean(best[0])):].lstrip("/")
        w = _clean(best[1])
        return w if not rest else (w + rest if w.endswith("/") else f"{w}/{rest}")
