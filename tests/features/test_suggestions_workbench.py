"""The workbench side of suggestions through the one door: who sees them (lead decides),
accepting one (marked in the edit history), least certain first, agreement with and without."""

from __future__ import annotations

import pytest

from clipscribe import Project, RecordError
from clipscribe.errors import NotALeadError

from .test_project_suggestions import labelled  # noqa: F401 (fixture)


def test_visibility_is_the_leads_decision(labelled):  # noqa: F811
    folder, _ = labelled
    with Project.open(folder) as p:
        p.add_annotator("boss", role="lead")
        assert p.suggestion_visibility() == "after-look"
        p.user = "boss"
        p.set_suggestion_visibility("off")
        assert p.suggestion_visibility() == "off"
        with pytest.raises(RecordError, match="must be one of off, after-look, on"):
            p.set_suggestion_visibility("sometimes")
        p.user = "ann-1"
        with pytest.raises(NotALeadError):
            p.set_suggestion_visibility("on")
        assert p.suggestion_visibility() == "off"
    with Project.open(folder) as p:  # stored with the project
        assert p.suggestion_visibility() == "off"
        assert any(e.entity == "setting" and (e.after or {}).get("suggestions") == "off"
                   for e in p.history())


def test_accepting_marks_the_label_and_undo_unmarks_it(labelled):  # noqa: F811
    folder, ids = labelled
    with Project.open(folder) as p:
        with pytest.raises(RecordError, match="no suggestion to accept"):
            p.accept_suggestion(ids["new"], "ann-2")
        p.train_suggester()
        best = p.suggest(ids["new"])[0][0]
        assert p.accept_suggestion(ids["new"], "ann-2") == best == "right"
        assert (ids["new"], "ann-2", "right") in p.clip_labels()
        assert p.accepted_suggestions() == {(ids["new"], "ann-2")}
        (accept,) = [e for e in p.history(clip=ids["new"]) if e.entity == "clip_label"]
        assert accept.action == "accept-suggestion"
        undone = p.revert([accept.id])
        assert p.accepted_suggestions() == set()
        p.revert(undone)  # redo
        assert p.accepted_suggestions() == {(ids["new"], "ann-2")}
        p.set_clip_label(ids["new"], "ann-2", "left")  # changed by hand since: not accepted
        assert p.accepted_suggestions() == set()


def test_agreement_with_and_without_accepted_labels(labelled):  # noqa: F811
    folder, ids = labelled
    with Project.open(folder) as p:
        p.train_suggester()
        p.set_clip_label(ids["new"], "ann-1", "right")
        p.accept_suggestion(ids["new"], "ann-2")
        out = p.agreement_with_and_without_suggestions()
        assert out["accepted_labels"] == 1
        assert out["with"]["labels"] == out["without"]["labels"] + 1
        # the accepted label agrees with ann-1, so leaving it out lowers the agreement
        assert out["without"]["alpha"] < out["with"]["alpha"]


def test_least_certain_first_orders_by_the_margin(labelled):  # noqa: F811
    folder, ids = labelled
    with Project.open(folder) as p:
        assert p.least_certain_first() == []
        p.train_suggester()
        order = p.least_certain_first()
        margins = [m for _, m in order]
        assert margins == sorted(margins)
        for clip, m in order[:3]:
            (a, pa), (b, pb) = p.suggest(clip)[:2]
            assert m == pytest.approx(pa - pb)
        assert {c for c, _ in order} <= {c.id for c in p.clips()}


def test_a_batch_is_handed_out_least_certain_first(labelled):  # noqa: F811
    folder, ids = labelled
    with Project.open(folder) as p:
        p.add_annotator("ann-3")
        p.assign(per_clip=3)  # every clip still wants a third person
        p.train_suggester()
        order = [c for c, _ in p.least_certain_first()]
        batch = p.hand_out_least_certain("ann-3", 4)
        assert batch == order[:4]
        assert p.next_clip("ann-3") == order[0]
        p.set_clip_label(order[0], "ann-3", "left")
        p.set_clip_state(order[0], "ann-3", "submitted")
        assert p.next_clip("ann-3") == order[1]
        assert p.hand_out_least_certain("ann-3", 2) == order[4:6]  # never the same clip twice
        p.user = "ann-3"
        with pytest.raises(NotALeadError):
            p.hand_out_least_certain("ann-3", 1)
