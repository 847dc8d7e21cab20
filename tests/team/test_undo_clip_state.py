"""Undoing a settle (reverting the gold label's history row) puts the clip's state back to what
its assignments say, and redoing it settles the clip again — on both backends. Before, the
gold label went but the clip stayed "settled" (found using the review desk: settle, Ctrl+Z,
and the board still counted one settled clip)."""

from __future__ import annotations

import pytest


from .conftest import add_clips

@pytest.fixture
def project(either_backend):
    p, ann = either_backend
    add_clips(p, 2)
    return p, ann


def test_undoing_a_settle_unsettles_the_clip_and_redo_settles_it(project):
    p, ann = project
    p.set_clip_label(1, ann, "stack")
    p.set_clip_state(1, ann, "submitted")
    assert p.clip_count(state="done") == 1
    with p.recording() as settle:
        p.set_gold_label(1, "stack")
    assert p.clip_count(state="settled") == 1
    undo = p.revert(settle)
    assert 1 not in p.gold_labels()
    assert (p.clip_count(state="settled"), p.clip_count(state="done")) == (0, 1)
    p.revert(undo)
    assert p.gold_labels()[1] == "stack"
    assert (p.clip_count(state="settled"), p.clip_count(state="done")) == (1, 0)


def test_undoing_a_settle_of_an_untouched_clip_leaves_it_new(project):
    p, _ = project
    with p.recording() as settle:
        p.set_gold_label(2, "put down")
    assert p.clip_count(state="settled") == 1
    p.revert(settle)
    assert p.clip_count(state="settled") == 0 and p.clip_count(state="new") == 2
