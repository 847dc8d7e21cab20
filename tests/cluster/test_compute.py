"""Precomputing media work on worker processes: the same results as one process, skipping what
is done, failures reported per file, and the database written only by the client."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.media.index import index_key
from clipscribe.cluster import KINDS, CacheFolders
from clipscribe.cluster.tasks import cache_file

from .projects import make_project


def cached_arrays(folder: Path) -> dict[str, list[np.ndarray]]:
    """Every result file below ``folder``, by name relative to it, as arrays."""
    out = {}
    for f in sorted(folder.rglob("*.np[yz]")):
        z = np.load(f, allow_pickle=False)
        if isinstance(z, np.ndarray):
            arrays = [z]
        else:
            with z:
                arrays = [np.array(z[k]) for k in sorted(z.files)]
        out[f.relative_to(folder).as_posix()] = arrays
    return out


def fingerprints(folder: Path) -> dict[str, int | None]:
    with Project.open(folder) as p:
        return {c.path: c.fingerprint for c in p.clips()}


def test_a_local_cluster_gives_what_one_process_gives(clips_master, tmp_path):
    import shutil
    one, two = tmp_path / "one", tmp_path / "two"
    shutil.copytree(clips_master, one)
    shutil.copytree(clips_master, two)
    with Project.open(one) as p:
        here = p.compute(workers=0, cache_dir=tmp_path / "cache-one")
    with Project.open(two) as p:
        there = p.compute(workers=2, cache_dir=tmp_path / "cache-two")
    assert here.ran_on == "in this process"
    assert there.ran_on == "a local cluster of 2 worker processes"
    for rep in (here, there):
        assert (rep.clips, rep.computed, rep.already_done, rep.failed) == (5, 5, 0, [])
        assert rep.by_kind == dict.fromkeys(KINDS, 5)
    assert fingerprints(one) == fingerprints(two)
    assert None not in fingerprints(one).values()
    a, b = cached_arrays(tmp_path / "cache-one"), cached_arrays(tmp_path / "cache-two")
    # per clip: index, thumbnails, motion, frame hashes of the fingerprint, features
    assert a.keys() == b.keys() and len(a) == 5 * 5
    for name in a:
        assert all(np.array_equal(x, y) for x, y in zip(a[name], b[name], strict=True)), name


def test_the_done_checks_name_the_files_the_engines_write(clips_copy, tmp_path, scheduler):
    cache = tmp_path / "cache"
    with Project.open(clips_copy) as p:
        p.compute(scheduler=scheduler, cache_dir=cache)
        clips = p.clips()
    folders = CacheFolders(str(cache))
    for c in clips:
        key = index_key(clips_copy / "media" / c.path)
        for kind in ("index", "thumbs", "motion", "features"):
            assert cache_file(kind, c.sha256, folders, index_key=key).is_file(), (kind, c.path)
        assert c.fingerprint is not None


def test_a_second_run_skips_what_is_done_and_computes_only_what_is_missing(clips_copy, tmp_path,
                                                                          scheduler):
    cache = tmp_path / "cache"
    with Project.open(clips_copy) as p:
        first = p.compute("fingerprint,thumbs", scheduler=scheduler, cache_dir=cache)
        again = p.compute(["thumbs", "fingerprint"], scheduler=scheduler, cache_dir=cache)
        more = p.compute("thumbs,motion", scheduler=scheduler, cache_dir=cache)
    assert (first.computed, first.already_done) == (5, 0)
    assert (again.computed, again.already_done, again.ran_on) == (0, 5, "")
    assert (more.computed, more.by_kind) == (5, {"motion": 5})


def test_a_missing_and_a_broken_file_are_reported_and_the_rest_is_computed(clips_copy, tmp_path,
                                                                           scheduler, capsys):
    media = clips_copy / "media"
    (media / "g0" / "c0.mp4").unlink()
    (media / "g1" / "c1.mp4").write_bytes(b"not a video at all" * 100)
    args = ["compute", str(clips_copy), "--scheduler", scheduler, "--what", "fingerprint,motion",
            "--cache", str(tmp_path / "cache")]
    assert main(args) == 1
    out = capsys.readouterr().out
    assert "5 clip(s): 0 already done, 3 computed, 2 failed" in out
    failed = {line.split(":")[0] for line in out.splitlines() if line.startswith("  failed ")}
    assert failed == {"  failed g0/c0.mp4", "  failed g1/c1.mp4"}
    assert "file not found" in out
    prints = fingerprints(clips_copy)
    assert [k for k, v in prints.items() if v is None] == ["g0/c0.mp4", "g1/c1.mp4"]
    assert main(args) == 1  # the failures are tried again, the clips done are not
    assert "5 clip(s): 3 already done, 0 computed, 2 failed" in capsys.readouterr().out


def test_a_worker_killed_mid_run_leaves_every_clip_done_or_reported(tmp_path):
    distributed = pytest.importorskip("distributed")
    import logging
    import signal

    folder = make_project(tmp_path / "project", n=8, size=(160, 120), frames=40)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=":0", silence_logs=logging.CRITICAL) as cluster, \
            distributed.Client(cluster) as client:
        pids = sorted(client.run(os.getpid).values())
        killed: list[int] = []

        def kill_one(done: int, total: int) -> None:
            if done >= 1 and not killed:
                killed.append(pids[0])
                os.kill(pids[0], signal.SIGKILL)

        with Project.open(folder) as p:
            rep = p.compute("fingerprint,motion", scheduler=cluster.scheduler_address,
                            cache_dir=tmp_path / "cache", progress=kill_one)
    assert killed
    assert rep.computed + len(rep.failed) == 8
    done = {path for path, v in fingerprints(folder).items() if v is not None}
    assert len(done) == rep.computed
    assert not done & {path for path, _ in rep.failed}


def test_a_killed_client_loses_only_the_clips_in_flight(tmp_path, scheduler):
    folder = make_project(tmp_path / "project", n=10, size=(160, 120), frames=40)
    code = ("import sys, clipscribe.project.compute as c; c.WRITE_EVERY = 1; "
            "from clipscribe.cli import main; "
            f"sys.exit(main(['compute', {str(folder)!r}, '--scheduler', {scheduler!r}, "
            f"'--what', 'fingerprint,motion', '--cache', {str(tmp_path / 'cache')!r}]))")
    proc = subprocess.Popen([sys.executable, "-c", code], stdout=subprocess.DEVNULL,
                            stderr=subprocess.DEVNULL)
    try:
        written = 0
        while written == 0 and proc.poll() is None:  # until the first clip is in the database
            try:
                proc.wait(0.05)
            except subprocess.TimeoutExpired:
                pass
            written = sum(v is not None for v in fingerprints(folder).values())
        proc.kill()
    finally:
        proc.wait()
    written = sum(v is not None for v in fingerprints(folder).values())
    with Project.open(folder) as p:
        rep = p.compute("fingerprint,motion", scheduler=scheduler, cache_dir=tmp_path / "cache")
    print("written before the kill:", written)
    assert rep.already_done == written
    assert rep.computed == 10 - written and rep.failed == []
    assert None not in fingerprints(folder).values()


def test_unknown_kinds_are_refused_before_any_work(clips_copy):
    from clipscribe import RecordError
    with Project.open(clips_copy) as p, pytest.raises(RecordError, match="no kind of work 'thumb'"):
        p.compute("thumb", workers=0)
    assert main(["compute", str(clips_copy), "--workers", "-1"]) == 2


def test_only_the_clips_or_the_group_asked_for_are_computed(clips_copy, tmp_path):
    with Project.open(clips_copy) as p:
        one = p.compute("fingerprint", clips=["g0/c0.mp4"], workers=0, cache_dir=tmp_path / "c")
        group = p.compute("fingerprint", group="g1", workers=0, cache_dir=tmp_path / "c")
        rest = p.compute("fingerprint", workers=0, cache_dir=tmp_path / "c")
    assert (one.clips, one.computed) == (1, 1)
    assert (group.clips, group.computed) == (2, 2)  # c1 and c3
    assert (rest.clips, rest.already_done, rest.computed) == (5, 3, 2)
