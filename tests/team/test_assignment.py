"""Assignment with overlap, pulling the next clip, and leases, on SQLite and on PostgreSQL."""

from __future__ import annotations

import collections
import json
import datetime as dt
import os
import subprocess
import sys
from pathlib import Path

import pytest
from sqlalchemy import text, update

from clipscribe import Project
from clipscribe.errors import PermissionRefused as TeamPermissionError
from clipscribe.project.team import overlap_selection
from clipscribe.store.models import Assignment

from .conftest import add_clips

BACKENDS = ["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)]
PULLER = Path(__file__).with_name("puller.py")
SRC = Path(__file__).parents[2] / "src"


@pytest.fixture(params=BACKENDS)
def project(request, tmp_path):
    if request.param == "postgres":
        yield request.getfixturevalue("server_project")
        return
    p = Project.create(tmp_path / "solo", user="boss")
    p.define_labels(["pick up", "put down", "stack"])
    yield p
    p.close()


def test_overlap_selection_is_deterministic_and_sized():
    ids = list(range(1, 101))
    a = overlap_selection(ids, 0.2, seed=3)
    assert a == overlap_selection(list(reversed(ids)), 0.2, seed=3)  # input order does not matter
    assert len(a) == 20 and set(a) <= set(ids)
    assert a != overlap_selection(ids, 0.2, seed=4)
    # floor(x + 0.5): 0.25 * 10 = 2.5 -> 3 (round half up, not Python's half to even)
    assert len(overlap_selection(list(range(10)), 0.25, seed=0)) == 3
    assert overlap_selection(ids, 0.0, seed=0) == [] and overlap_selection(ids, 1.0, seed=0) == ids


def test_plan_sets_people_per_clip(project):
    ids = add_clips(project, 10)
    plan = project.assign(per_clip=1, overlap=0.2, overlap_count=3, seed=5)
    assert (plan.clips, plan.overlapped) == (10, 2)
    wanted = project.assignment_plan()
    assert sorted(wanted.values()) == [1] * 8 + [3] * 2
    assert [c for c, n in wanted.items() if n == 3] == overlap_selection(ids, 0.2, seed=5)
    with pytest.raises(ValueError):
        project.assign(overlap=1.5)


def test_pulls_fill_each_clip_exactly(project, uid):
    add_clips(project, 6)
    project.assign(per_clip=1, overlap=0.34, overlap_count=2, seed=1)   # 2 clips x 2, 4 x 1
    people = [f"a{i}_{uid}" for i in range(3)]
    for name in people:
        project.add_annotator(name)
    got = collections.defaultdict(list)
    while True:
        progressed = False
        for name in people:
            clip = project.next_clip(name)
            if clip is not None:
                assert project.next_clip(name) == clip  # own open clip comes back first
                got[clip].append(name)
                project.set_clip_state(clip, name, "submitted")
                progressed = True
        if not progressed:
            break
    wanted = project.assignment_plan()
    assert {c: len(v) for c, v in got.items()} == wanted
    assert all(len(set(v)) == len(v) for v in got.values())


def _age_leases(project, hours: float) -> None:
    """Move every open lease into the past (as if the people walked away)."""
    past = dt.datetime.now(dt.timezone.utc) - dt.timedelta(hours=hours)
    def work(s):
        s.execute(update(Assignment).where(Assignment.state == "open")
                  .values(expires_at=past, assigned_at=past, updated_at=past))
    project._write(work)


def test_abandoned_lease_returns_to_the_pool(project, uid):
    add_clips(project, 2)
    project.assign(per_clip=1)
    idle, busy, late = (f"{n}_{uid}" for n in ("idle", "busy", "late"))
    for name in (idle, busy, late):
        project.add_annotator(name)
    c1 = project.next_clip(idle)
    c2 = project.next_clip(busy)
    assert project.next_clip(late) is None
    _age_leases(project, 3)
    project.user = busy                          # busy works on their clip (edits are theirs)
    project.set_clip_label(c2, busy, "stack")
    project.user = "boss"
    assert project.next_clip(late) == c1        # idle's lease expired, busy's did not
    assert project.clip_state(c1, idle)[0] == "expired"
    assert project.clip_state(c2, busy)[0] == "open"
    assert any(e.action == "expire" and e.clip == c1 for e in project.history(clip=c1))


def test_lease_length_is_a_setting(project):
    assert project.lease_seconds() == 7200
    project.set_lease(0.5)
    assert project.lease_seconds() == 1800


def _pull_in_processes(folder: Path, people: list[tuple[str, str]]) -> dict[int, list[str]]:
    env = dict(os.environ, PYTHONPATH=str(SRC))
    procs = {u: subprocess.Popen([sys.executable, str(PULLER), str(folder), u, pw],
                                 stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
             for u, pw in people}
    got = collections.defaultdict(list)
    for u, proc in procs.items():
        # a guard against a hang, not a speed goal: four processes share two cores with the
        # rest of the suite, so allow far more than the few seconds a pull loop takes
        out, err = proc.communicate(timeout=600)
        assert proc.returncode == 0, err[-2000:]
        for line in out.split():
            got[int(line)].append(u)
    return got


@pytest.mark.postgres
def test_racing_logins_never_share_a_single_clip(server_project, uid):
    p = server_project
    add_clips(p, 24)
    p.assign(per_clip=1, overlap=0.25, overlap_count=3, seed=2)      # 6 clips x 3, 18 x 1
    people = [(f"r{i}_{uid}", f"pw{i}") for i in range(4)]
    for name, pw in people:
        p.add_annotator(name, password=pw)
    got = _pull_in_processes(p.folder, people)
    assert {c: len(v) for c, v in got.items()} == p.assignment_plan()
    assert all(len(set(v)) == len(v) for v in got.values())


def test_racing_processes_never_share_a_single_clip_sqlite(tmp_path):
    with Project.create(tmp_path / "solo", user="boss") as p:
        p.define_labels(["stack"])
        add_clips(p, 12)
        p.assign(per_clip=1, overlap=0.25, overlap_count=2, seed=2)
        people = [(f"r{i}", "") for i in range(3)]
        for name, _ in people:
            p.add_annotator(name)
        got = _pull_in_processes(p.folder, people)
        assert {c: len(v) for c, v in got.items()} == p.assignment_plan()


@pytest.mark.postgres
def test_only_leads_plan(server_project, uid):
    p = server_project
    add_clips(p, 2)
    p.add_annotator(f"x_{uid}", password="pw-x")
    with Project.open(p.folder, user=f"x_{uid}", password="pw-x") as a:
        with pytest.raises(TeamPermissionError):
            a.assign(per_clip=2)
        with pytest.raises(TeamPermissionError):   # the database refuses the raw change too
            a._write(lambda s: s.execute(text("UPDATE clips SET annotators_wanted = 5")))


def test_cli_assign_and_next(tmp_path, capsys):
    from clipscribe.cli import main
    with Project.create(tmp_path / "solo", user="boss") as p:
        p.define_labels(["stack"])
        ids = add_clips(p, 4)
        p.add_annotator("ann")
    d = str(tmp_path / "solo")
    assert main(["assign", d, "--user", "boss", "--overlap", "0.5", "--overlap-count", "2",
                 "--seed", "9", "--lease-hours", "1", "--json"]) == 0
    recipe = json.loads(capsys.readouterr().out)
    assert recipe["overlapped"] == 2 and recipe["seed"] == 9
    assert main(["next", d, "--user", "ann"]) == 0
    assert capsys.readouterr().out.split("\t")[0] == str(ids[0])
    assert main(["assign", d, "--user", "ann"]) == 1            # annotators do not plan
    assert "not a lead" in capsys.readouterr().err
    with Project.open(d) as p:
        assert p.lease_seconds() == 3600


@pytest.mark.postgres
def test_clip_state_counts_everyones_work(server_project, uid):
    p = server_project
    clip = add_clips(p, 1)[0]
    p.assign(per_clip=2)
    names = [f"st{i}_{uid}" for i in range(2)]
    for n in names:
        p.add_annotator(n, password="pw-" + n)
    first, second = (Project.open(p.folder, user=n, password="pw-" + n) for n in names)
    with first, second:
        assert first.next_clip() == second.next_clip() == clip
        first.set_clip_state(clip, names[0], "submitted")   # first cannot see second's open work
        assert p.clip(clip).state == "in_progress"
        second.set_clip_state(clip, names[1], "submitted")
        assert p.clip(clip).state == "done"
