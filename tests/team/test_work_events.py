"""Throughput and the agreement trend read the edit history's times, people and clips in SQL
(the person a row belongs to comes out of the history's JSON): the same answer on both
backends, credited to the annotator whose row changed even when a lead wrote it."""

from __future__ import annotations

import datetime as dt

import pytest

from clipscribe import Project

from .conftest import add_clips

BACKENDS = ["sqlite", pytest.param("postgres", marks=pytest.mark.postgres)]


@pytest.fixture(params=BACKENDS)
def project(request, tmp_path):
    if request.param == "postgres":
        p = request.getfixturevalue("server_project")
        uid = request.getfixturevalue("uid")
    else:
        p, uid = Project.create(tmp_path / "solo", user="boss"), "x"
    p.define_labels(["stack", "sort"])
    yield p, f"ann_{uid}", f"bob_{uid}"
    p.close()


def test_work_is_credited_to_the_row_owner_on_both_backends(project):
    p, ann, bob = project
    add_clips(p, 3)
    p.add_annotator(ann)
    p.add_annotator(bob)
    start = dt.datetime(2026, 5, 4, 9, 0, tzinfo=dt.timezone.utc)
    for seconds, clip, who in ((0, 1, ann), (60, 2, ann), (0, 1, bob), (20, 3, bob)):
        with Project.simulated_clock(lambda s=seconds: start + dt.timedelta(seconds=s)):
            p.set_clip_label(clip, who, "stack")  # written by the lead, for ``who``
    got = p.throughput()
    assert (got[ann].clips, got[ann].active_seconds) == (2, 60)
    assert (got[bob].clips, got[bob].active_seconds) == (2, 20)
    assert sum(len(t.clips) for t in p.agreement_trend(by="clips", window=3)) == 3
