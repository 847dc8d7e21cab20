"""The result cache on a team server: the lead's second report reuses the caption part, and a
caption an annotator writes from their own login (another client, another folder) is never
served stale to the lead — the stamp is read from the server both clients share."""

from __future__ import annotations

import pytest

from clipscribe import Project

from tests.review.test_report import same
from tests.review.test_result_cache import BOOT, CACHED, numbers
from .conftest import add_clips

CAPTIONS = {  # (clip, person) -> captions, invented for this test
    (1, 0): ["the arm lifts the red block", "a red block goes up"],
    (1, 1): ["the arm picks up a red block", "a red cube is lifted"],
    (2, 0): ["the arm pushes the blue block left", "a blue block slides"],
    (2, 1): ["a blue cube is pushed to the left", "the arm shoves the blue block"],
    (3, 0): ["nothing moves on the bench", "the arm waits"],
    (3, 1): ["the arm stays still", "the bench is quiet"],
}


@pytest.mark.postgres
def test_a_caption_written_by_another_client_is_never_served_stale(server_project, uid, tmp_path):
    p = server_project
    add_clips(p, 3)
    people = [f"ann_{uid}", f"bob_{uid}"]
    for name in people:
        p.add_annotator(name, password=f"pw-{name}")
    for (clip, who), texts in CAPTIONS.items():
        for text in texts:
            p.add_caption(clip, people[who], text)
        p.set_clip_label(clip, people[who], "stack" if clip != 2 else "put down")
    first = p.agreement_report(n_boot=BOOT)
    assert first.recipe.note is None
    second = p.agreement_report(n_boot=BOOT)
    assert second.recipe.note.startswith(CACHED)
    same(numbers(second), numbers(first))

    with Project.open(p.folder, user=people[0], password=f"pw-{people[0]}") as ann:
        ann.add_caption(3, people[0], "the arm lowers its gripper onto the bench")
    after = p.agreement_report(n_boot=BOOT)
    assert after.recipe.note is None                      # the server's rows moved the stamp
    same(numbers(after), numbers(p.agreement_report(n_boot=BOOT, cache=False)))
    assert "the arm lowers its gripper onto the bench" in {
        c.text for c in after.captions.bleu.captions}
