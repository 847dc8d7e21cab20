"""The path mapping, adding media on workers, and what is loaded when: Dask only where a
cluster is used, nothing of this for ``stats``."""

from __future__ import annotations

import shutil
import subprocess
import sys
from dataclasses import replace

import pytest

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.cluster import DaskMissing, PathMap, run_tasks


@pytest.mark.parametrize("path, sent", [
    ("/mnt/videos/a/b.mp4", "/data/videos/a/b.mp4"),
    ("/mnt/videos", "/data/videos"),
    ("/mnt/videos-old/b.mp4", "/mnt/videos-old/b.mp4"),    # whole components only
    ("/mnt/videos/cache/x.npz", "/fast/cache/x.npz"),      # the longest prefix wins
    ("/elsewhere/b.mp4", "/elsewhere/b.mp4"),
    ("/mnt/videos/sub dir/ü.mp4", "/data/videos/sub dir/ü.mp4"),
])
def test_a_path_below_a_client_prefix_is_sent_below_the_worker_prefix(path, sent):
    m = PathMap.parse(["/mnt/videos/=/data/videos", "/mnt/videos/cache=/fast/cache"])
    assert m.to_worker(path) == sent


def test_windows_client_paths_map_to_posix_workers():
    m = PathMap.parse([r"D:\media=/srv/media"])
    assert m.to_worker(r"D:\media\g1\c1.mp4") == "/srv/media/g1/c1.mp4"


@pytest.mark.parametrize("bad", ["/mnt/videos", "=/data", "/mnt="])
def test_a_mapping_without_both_sides_is_refused(bad):
    with pytest.raises(ValueError, match="CLIENT_PREFIX=WORKER_PREFIX"):
        PathMap.parse([bad])
    assert main(["compute", "/nonexistent", "--map", bad]) in (1, 2)


def test_a_cluster_without_dask_installed_says_what_to_install(monkeypatch):
    monkeypatch.setitem(sys.modules, "distributed", None)  # import fails as if not installed
    got = []
    assert run_tasks(abs, [-1, 2], lambda t, r, why: got.append(r), workers=0) == "in this process"
    assert got == [1, 2]
    with pytest.raises(DaskMissing, match=r"pip install 'clipscribe\[cluster\]'"):
        run_tasks(abs, [-1], lambda t, r, why: None, workers=2)


def test_a_task_that_raises_is_reported_and_the_run_goes_on():
    got = []
    run_tasks(lambda x: 10 // x, [5, 0, 2], lambda t, r, why: got.append((t, r, why)), workers=0)
    assert got == [(5, 2, None), (0, None, "ZeroDivisionError: integer division or modulo by zero"),
                   (2, 5, None)]


def test_adding_media_on_workers_gives_the_clips_one_process_gives(tmp_path, make_video,
                                                                   scheduler):
    folders = []
    for name in ("here", "there"):
        with Project.create(tmp_path / name) as p:
            for i in range(4):
                make_video(p.media_root / f"g{i % 2}" / f"c{i}.mp4", seed=i, noise=True)
            make_video(p.media_root / "g0" / "copy.mp4", seed=0, noise=True)  # same bytes as c0
            (p.media_root / "g1" / "broken.mp4").write_bytes(b"\x00" * 500)
            folders.append(tmp_path / name)
    with Project.open(folders[0]) as p:
        here = p.add_media(p.media_root, group_pattern=r"^(?P<group>[^/]+)/")
        rows_here = {c.path: replace(c, id=0) for c in p.clips()}
    with Project.open(folders[1]) as p:
        there = p.add_media(p.media_root, group_pattern=r"^(?P<group>[^/]+)/",
                            scheduler=scheduler)
        rows_there = {c.path: replace(c, id=0) for c in p.clips()}
        again = p.add_media(p.media_root, scheduler=scheduler)
    assert rows_here == rows_there and len(rows_here) == 5
    assert len(there.added) == 5
    assert [(p, why.replace("/there/", "/here/")) for p, why in there.skipped] == here.skipped
    assert [p for p, _ in there.skipped] == ["g1/broken.mp4"]
    assert sorted(there.duplicates) == sorted(here.duplicates) and len(there.duplicates) == 1
    assert (again.added, len(again.already_present)) == ([], 5)


def test_add_media_from_the_command_line_with_workers(tmp_path, make_video, capsys):
    with Project.create(tmp_path / "p") as p:
        for i in range(3):
            make_video(p.media_root / "g" / f"c{i}.mp4", seed=i, noise=True)
    assert main(["add-media", str(tmp_path / "p"), "--workers", "1"]) == 0
    assert "added 3 clip(s)" in capsys.readouterr().out
    assert main(["add-media", str(tmp_path / "p"), "--workers", "1", "--scheduler", "x"]) == 2


def test_stats_and_computing_in_this_process_load_no_dask(sample_master, tmp_path):
    folder = tmp_path / "s"
    shutil.copytree(sample_master, folder)
    code = ("import sys; from clipscribe.cli import main; "
            "rc = main(sys.argv[1:]); "
            "print(rc, sorted(m for m in sys.modules if m.split('.')[0] in ('dask', 'distributed') "
            "or m.startswith('clipscribe.cluster')), file=sys.stderr)")
    for args, loaded in ((["stats", str(folder)], "[]"),
                         (["compute", str(folder), "--workers", "0", "--what", "fingerprint"],
                          None)):
        out = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True,
                             timeout=120)
        assert out.returncode == 0, out.stderr
        last = out.stderr.strip().splitlines()[-1]
        if loaded is not None:
            assert last == f"0 {loaded}"
        else:
            assert "clipscribe.cluster" in last and "distributed" not in last
