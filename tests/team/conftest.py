"""Fixtures for team mode: one throwaway PostgreSQL server per test session, projects on it
(each in its own new database), and tiny video clips to fill them."""

from __future__ import annotations

import os
import uuid
from pathlib import Path

import pytest
from videos import write_video

from clipscribe import Project

from .pg_cluster import ADMIN_PASSWORD, Cluster, find_bin

HERE = Path(__file__).parent


def write_clip(path: Path, seed: int, frames: int = 12) -> Path:
    """A small MJPEG clip whose pixels depend on ``seed`` (so every file differs)."""
    return write_video(path, frames, (32, 24), seed, codec="MJPG", noise=True)


def connect_as(p: Project, login: str, password: str):
    """A raw autocommit psycopg connection to ``p``'s server database as ``login``."""
    import psycopg
    url = p.engine.url
    return psycopg.connect(host=url.host, port=url.port, dbname=url.database, user=login,
                           password=password, autocommit=True)


def add_clips(p: Project, n: int) -> list[int]:
    ids = []
    for i in range(n):
        ids.append(p.add_clip(write_clip(p.media_root / f"c{i:03d}.avi", i)))
    return ids


@pytest.fixture(scope="session")
def pg():
    if find_bin() is None:
        pytest.skip("PostgreSQL server binaries not found under /usr/lib/postgresql/*/bin "
                    "(apt-get install postgresql)")
    cluster = Cluster().start()
    old = os.environ.get("PGPASSFILE")
    os.environ["PGPASSFILE"] = str(cluster.pgpass)  # subprocesses inherit it
    try:
        yield cluster
    finally:
        if old is None:
            os.environ.pop("PGPASSFILE", None)
        else:
            os.environ["PGPASSFILE"] = old
        cluster.stop()


@pytest.fixture
def uid() -> str:
    """A short unique tag: logins are server-wide, so every test names its people apart."""
    return uuid.uuid4().hex[:6]


@pytest.fixture
def server_project(pg, tmp_path):
    """A new project on its own database; the creator is lead ``boss`` (the admin login)."""
    url = pg.new_database()
    with_pw = url.replace("@", f":{ADMIN_PASSWORD}@", 1)
    p = Project.create(tmp_path / "proj", database_url=with_pw, user="boss")
    p.define_labels(["pick up", "put down", "stack"])
    yield p
    p.close()


@pytest.fixture(params=["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)])
def either_backend(request, tmp_path):
    """(project, annotator name) on a SQLite file and on a server: lead ``boss``, the labels
    pick up / put down / stack, one annotator, no clips yet."""
    if request.param == "postgres":
        p = request.getfixturevalue("server_project")
        ann = f"ann_{request.getfixturevalue('uid')}"
    else:
        p, ann = Project.create(tmp_path / "solo", user="boss"), "ann_x"
        p.define_labels(["pick up", "put down", "stack"])
    p.add_annotator(ann)
    yield p, ann
    p.close()
