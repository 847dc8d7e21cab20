"""A Dask scheduler with two worker processes, started once for the tests that connect to one,
and small projects of generated clips."""

from __future__ import annotations

import logging
import shutil
from pathlib import Path

import pytest

from .projects import make_project

distributed = pytest.importorskip("distributed")


@pytest.fixture(scope="session")
def scheduler():
    """The address of a local scheduler with two single-thread worker processes."""
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=":0", silence_logs=logging.ERROR) as cluster:
        yield cluster.scheduler_address


@pytest.fixture(scope="session")
def clips_master(tmp_path_factory) -> Path:
    return make_project(tmp_path_factory.mktemp("clips") / "project")


@pytest.fixture
def clips_copy(clips_master, tmp_path) -> Path:
    """A fresh copy of a project of five small clips."""
    dst = tmp_path / "project"
    shutil.copytree(clips_master, dst)
    return dst
