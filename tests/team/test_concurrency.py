"""Many writers at once lose nothing; stale writes are refused with the user's text kept; a
writer killed mid-transaction loses only its uncommitted edit."""

from __future__ import annotations

import collections
import os
import signal
import subprocess
import sys
from pathlib import Path

import pytest

from clipscribe import Project
from clipscribe.errors import StaleWriteError

from .conftest import add_clips

WRITER = Path(__file__).with_name("writer.py")
SRC = Path(__file__).parents[2] / "src"


def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(SRC) + os.pathsep + env.get("PYTHONPATH", "")
    return env


def _spawn(folder: Path, user: str, password: str, n: int, *extra: str) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, str(WRITER), str(folder), user, password, str(n), *extra],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=_env())


def _run_writers(folder: Path, people: list[tuple[str, str]], n: int) -> dict[str, list[str]]:
    procs = {u: _spawn(folder, u, pw, n) for u, pw in people}
    acks = {}
    for u, proc in procs.items():
        out, err = proc.communicate(timeout=240)
        assert proc.returncode == 0, f"writer {u} failed:\n{err[-3000:]}"
        acks[u] = [line for line in out.splitlines() if line != "ready" and not line.startswith("timing")]
    return acks


def _check_nothing_lost(p: Project, acks: dict[str, list[str]], n: int) -> None:
    captions = p.caption_rows()
    by_id = {c.id: c for c in captions}
    texts = collections.Counter(c.text for c in captions)
    assert not [t for t, k in texts.items() if k > 1], "a caption was stored twice"
    labels = {(clip, who): lab for clip, who, lab in p.clip_labels()}
    for user, lines in acks.items():
        assert len(lines) == n, f"{user}: {len(lines)} of {n} edits acknowledged"
        last_label = {}
        for line in lines:
            kind, ref, value = line.split(" ", 2)
            if kind == "caption":
                assert by_id[int(ref)].text == value and by_id[int(ref)].annotator == user
            else:
                last_label[int(ref)] = value
        for clip, value in last_label.items():
            assert labels[(clip, user)] == value
        assert sum(1 for c in captions if c.annotator == user) == sum(
            1 for line in lines if line.startswith("caption"))
        # one history row per acknowledged edit, none for anything else
        assert len(p.history(annotator=user)) == n


@pytest.mark.postgres
@pytest.mark.slow  # ~3 minutes; `make test` (and so CI) still runs it
def test_eight_logins_five_hundred_edits_each(server_project, pg, uid):
    p = server_project
    add_clips(p, 10)
    people = []
    for i in range(8):
        name, pw = f"w{i}_{uid}", f"pw-{i}-{uid}"
        p.add_annotator(name, password=pw)
        people.append((name, pw))
    acks = _run_writers(p.folder, people, 500)
    _check_nothing_lost(p, acks, 500)


def test_four_sqlite_processes_two_hundred_edits_each(tmp_path):
    with Project.create(tmp_path / "solo", user="boss") as p:
        p.define_labels(["pick up", "put down", "stack"])
        add_clips(p, 10)
        people = [(f"s{i}", "") for i in range(4)]
        for name, _ in people:
            p.add_annotator(name)
        acks = _run_writers(p.folder, people, 200)
        _check_nothing_lost(p, acks, 200)


def _stale_write(p: Project, other: Project, user: str) -> None:
    cid = p.add_caption(p.clips()[0].id, user, "a person puts a red cup down")
    v = p.caption_version(cid)
    other.update_caption(cid, "a person puts the cup down", expected_version=v)
    with pytest.raises(StaleWriteError) as err:
        p.update_caption(cid, "my careful rewrite of the caption", expected_version=v)
    assert "not saved" in str(err.value)
    assert err.value.kept_text == "my careful rewrite of the caption"
    assert err.value.current_text == "a person puts the cup down"
    assert err.value.current_version == v + 1
    assert [c.text for c in p.caption_rows() if c.id == cid] == ["a person puts the cup down"]


def test_stale_caption_write_is_refused_sqlite(tmp_path):
    with Project.create(tmp_path / "solo", user="boss") as p:
        p.define_labels(["stack"])
        add_clips(p, 1)
        with Project.open(p.folder, user="boss") as other:
            _stale_write(p, other, "boss")


@pytest.mark.postgres
def test_stale_caption_write_is_refused_server(server_project, uid):
    p = server_project
    add_clips(p, 1)
    p.add_annotator(f"ann_{uid}", password="pw-a")
    with Project.open(p.folder, user=f"ann_{uid}", password="pw-a") as a, \
            Project.open(p.folder, user=f"ann_{uid}", password="pw-a") as a2:
        _stale_write(a, a2, f"ann_{uid}")


@pytest.mark.postgres
def test_two_leads_on_one_gold_label_conflict(server_project, uid):
    p = server_project
    clip = add_clips(p, 1)[0]
    p.add_annotator(f"lead2_{uid}", role="lead", password="pw-l")
    with Project.open(p.folder, user=f"lead2_{uid}", password="pw-l") as other:
        v = p.gold_label_version(clip)
        assert v == other.gold_label_version(clip) == 0
        other.set_gold_label(clip, "stack", expected_version=v)
        with pytest.raises(StaleWriteError) as err:
            p.set_gold_label(clip, "pick up", expected_version=v)
        assert err.value.kept_value == "pick up" and err.value.current_value == "stack"
        assert p.gold_labels() == {clip: "stack"}
        p.set_gold_label(clip, "pick up", expected_version=p.gold_label_version(clip))
        assert other.gold_labels() == {clip: "pick up"}


def _kill_mid_transaction(folder: Path, user: str, password: str) -> list[str]:
    proc = _spawn(folder, user, password, 5, "hang")
    lines = []
    for line in proc.stdout:
        lines.append(line.strip())
        if line.strip() == "in-flight":
            break
    assert lines[-1] == "in-flight", proc.stderr.read()
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait(timeout=30)
    assert proc.returncode == -signal.SIGKILL
    return [line for line in lines if line not in ("ready", "in-flight") and not line.startswith("timing")]


def _check_after_kill(p: Project, user: str, acked: list[str]) -> None:
    texts = {c.text for c in p.caption_rows(annotator=user)}
    assert len(acked) == 5
    assert {line.split(" ", 2)[2] for line in acked if line.startswith("caption")} <= texts
    assert f"{user}/in-flight" not in texts
    # the killed writer left no lock behind: a new write goes through at once
    p.add_caption(p.clips()[0].id, user, "written after the crash")
    assert "written after the crash" in {c.text for c in p.caption_rows(annotator=user)}
    assert len(p.history(annotator=user)) == 5  # the five acknowledged edits, nothing else


@pytest.mark.postgres
def test_kill_minus_nine_mid_transaction_server(server_project, uid):
    p = server_project
    add_clips(p, 2)
    name = f"k_{uid}"
    p.add_annotator(name, password="pw-k")
    acked = _kill_mid_transaction(p.folder, name, "pw-k")
    _check_after_kill(p, name, acked)


def test_kill_minus_nine_mid_transaction_sqlite(tmp_path):
    with Project.create(tmp_path / "solo", user="boss") as p:
        p.define_labels(["pick up", "put down", "stack"])
        add_clips(p, 2)
        p.add_annotator("k")
        acked = _kill_mid_transaction(p.folder, "k", "")
    with Project.open(tmp_path / "solo", user="boss") as p:
        _check_after_kill(p, "k", acked)
