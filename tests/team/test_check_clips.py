"""Check clips: a lead marks clips with a known answer; the queue mixes them into every
annotator's work at the lead's rate; annotators cannot list them; each annotator's accuracy
on them (Wilson interval) and kappa against the answers reach the agreement report; dumps of
a lead carry them and import them back."""

from __future__ import annotations

import pytest

from clipscribe import Project, RecordError
from clipscribe.errors import NotALeadError

from .conftest import add_clips

from .test_assignment import project  # noqa: F401 (the fixture: SQLite and PostgreSQL)


def _open_as(p: Project, name: str) -> Project:
    if p.engine.url.get_backend_name() == "postgresql":
        return Project.open(p.folder, user=name, password=f"pw-{name}")
    return Project.open(p.folder, user=name)


def test_queue_mixes_check_clips_in_at_the_rate(project, uid):
    clips = add_clips(project, 10)
    for c in clips[-2:]:
        assert project.mark_check_clip(c, "stack") == "stack"
    plan = project.assign(per_clip=1, check_rate=0.25)
    assert project.check_rate() == 0.25 and plan.clips == 10
    names = [f"ann_{uid}", f"bea_{uid}"]
    for n in names:
        project.add_annotator(n, password=f"pw-{n}")
    got = {}
    for n in names:
        with _open_as(project, n) as me:
            order = []
            while (c := me.next_clip()) is not None:
                order.append(c)
                me.set_clip_label(c, n, "stack")
                me.set_clip_state(c, n, "submitted")
            got[n] = order
    regular, checks = clips[:8], clips[8:]
    # ann: every 4th clip is a check clip, the rest in order of the queue
    assert got[names[0]] == [*regular[:3], checks[0], *regular[3:6], checks[1], *regular[6:]]
    # bea finds every regular place taken, but the check clips go to everyone
    assert got[names[1]] == []  # no regular clip: nothing to mix them into
    project.assign(per_clip=2, check_rate=0.5)
    with _open_as(project, names[1]) as me:
        first = [me.next_clip()]
        me.set_clip_state(first[0], names[1], "submitted")
        second = me.next_clip()
    assert first == [regular[0]] and second == checks[0]


def test_lead_only_answers_gold_default_and_report(tmp_path):
    p = Project.create(tmp_path / "p", user="boss")
    p.define_labels(["pick up", "put down", "stack"])
    c1, c2, c3 = add_clips(p, 3)
    p.add_annotator("ann")
    p.add_annotator("bea")
    with pytest.raises(RecordError, match="no gold label"):
        p.mark_check_clip(c1)
    p.set_gold_label(c1, "stack")
    assert p.mark_check_clip(c1) == "stack"
    assert p.mark_check_clip(c2, "pick up") == "pick up"
    with pytest.raises(RecordError, match="not in the label set"):
        p.mark_check_clip(c3, "jump")
    assert p.check_clips() == {c1: "stack", c2: "pick up"}
    for c, a, b in ((c1, "stack", "put down"), (c2, "pick up", "pick up"), (c3, "stack", "stack")):
        p.set_clip_label(c, "ann", a)
        p.set_clip_label(c, "bea", b)
    rel = p.agreement_report(n_boot=10).reliability
    by = {r.annotator: r for r in rel.checks}
    assert rel.n_check_clips == 2
    assert (by["ann"].accuracy.successes, by["ann"].accuracy.trials) == (2, 2)
    assert (by["bea"].accuracy.successes, by["bea"].accuracy.trials) == (1, 2)
    assert 0 < by["bea"].accuracy.low < 0.5 < by["bea"].accuracy.high < 1
    assert float(by["ann"].kappa) == pytest.approx(1.0)
    assert p.unmark_check_clip(c2) is True and p.unmark_check_clip(c2) is False
    assert p.check_clips() == {c1: "stack"}
    entities = [e.entity for e in p.history()]
    assert entities.count("check_clip") == 3
    p.close()
    with Project.open(tmp_path / "p", user="ann") as a:
        for call in (a.check_clips, lambda: a.mark_check_clip(c3, "stack"),
                     lambda: a.unmark_check_clip(c1)):
            with pytest.raises(NotALeadError):
                call()
        assert a.agreement_inputs()  # nothing else refused
        assert a._peers.analysis.known_answers() == {}
        assert all(r.type != "check" for r in a.iter_records())


def test_dump_and_import_carry_check_clips(tmp_path):
    p = Project.create(tmp_path / "p", user="boss")
    p.define_labels(["pick up", "put down", "stack"])
    c1, c2 = add_clips(p, 2)
    p.mark_check_clip(c2, "put down")
    dump = tmp_path / "all.jsonl"
    p.export_records(dump)
    import json
    recs = [json.loads(line) for line in dump.read_text().splitlines()]
    assert [r for r in recs if r["type"] == "check"] == [
        {"type": "check", "clip": "c001.avi", "annotator": "boss", "label": "put down"}]
    q = Project.create(tmp_path / "q", user="boss")
    q.define_labels(["pick up", "put down", "stack"])
    for c in (c1, c2):
        path = p.media_path(c)
        (q.media_root / path.name).write_bytes(path.read_bytes())
    counts = q.import_records(dump)
    assert counts["check"] == 1
    assert list(q.check_clips().values()) == ["put down"]
    assert q.import_records(dump)["check"] == 0  # the same again changes nothing
    p.close()
    q.close()


def test_a_lead_hands_out_a_batch_in_the_given_order(project, uid, monkeypatch):
    """The hand-out path on both back ends, as a lead who is not the database owner: the
    batch is reserved in the order given (the suggester's margins are replaced by a fixed
    order here; tests/features checks the order itself), the annotator's queue gives the
    batch first, then the rest by clip number, and check clips stay out of a hand-out."""
    clips = add_clips(project, 7)
    project.mark_check_clip(clips[6], "stack")
    project.assign(per_clip=1)
    lead, ann = f"lee_{uid}", f"ann_{uid}"
    project.add_annotator(lead, role="lead", password=f"pw-{lead}")
    project.add_annotator(ann, password=f"pw-{ann}")
    order = [clips[6], clips[4], clips[1]]  # the check clip would come first, if it were free
    service = type(project._suggestions)
    monkeypatch.setattr(service, "least_certain_first",
                        lambda self, clips=None: [(c, 0.1 * k) for k, c in enumerate(order)])
    with _open_as(project, lead) as boss:
        assert boss.hand_out_least_certain(ann, 2) == [clips[4], clips[1]]
    with _open_as(project, ann) as me:
        got = []
        while (c := me.next_clip()) is not None:
            got.append(c)
            me.set_clip_label(c, ann, "stack")
            me.set_clip_state(c, ann, "submitted")
    assert got == [clips[4], clips[1], clips[0], clips[2], clips[3], clips[5]]
