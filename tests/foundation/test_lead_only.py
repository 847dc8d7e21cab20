"""One role check at the façade: every lead-only action is refused to an annotator, whatever
the door (here the API, and one through the CLI), and nothing is written when it is. On
SQLite this guards against mistakes; on a server the database enforces the same by login."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.errors import NotALeadError

LABELS = ["pick up", "put down", "push"]


@pytest.fixture
def folder(project) -> Path:
    """The foundation project (lead ``lead``, annotators ann-a and ann-b, three clips), with
    ann-a's label on clip 1 and a spare video under the media root, closed."""
    project.set_clip_label(1, "ann-a", "push")
    return project.folder


def _state(p: Project) -> dict:
    """Everything a lead-only action could change, read as the lead sees it."""
    return {"labels": [(l.name, l.key, l.colour) for l in p.labels()],
            "people": [(a.name, a.role) for a in p.annotators()],
            "clips": [(c.id, c.path, c.fingerprint) for c in p.clips()],
            "settings": p.settings.model_dump(), "gold": p.gold_labels(),
            "gold_captions": p.gold_captions(), "gold_segments": p.gold_segments(),
            "comments": p.comments(), "plan": p.assignment_plan(), "lease": p.lease_seconds(),
            "blind": p.blind_mode(), "history": len(p.history())}


def _jsonl(path: Path, *records: dict) -> Path:
    path.write_text("".join(json.dumps(r) + "\n" for r in records))
    return path


def _actions(p: Project, tmp: Path, make_video) -> dict:
    spare = make_video(p.media_root / "g2" / "spare.mp4", seed=9)
    outside = tmp / "outside"
    make_video(outside / "x.mp4", seed=10)
    return {
        "define_labels": lambda: p.define_labels(["only this"]),
        "add_annotator": lambda: p.add_annotator("mallory", role="lead"),
        "add_clip": lambda: p.add_clip(spare),
        "add_media": lambda: p.add_media(p.media_root),
        "copy_media_in": lambda: p.copy_media_in(outside),
        "set_fingerprint": lambda: p.set_fingerprint(1, 42),
        "compute_fingerprints": lambda: p.compute_fingerprints(),
        "update_settings": lambda: p.update_settings(require_consent=True),
        "set_caption_rules": lambda: p.set_caption_rules(captions_per_clip=1),
        "set_gold_label": lambda: p.set_gold_label(1, "push"),
        "set_gold_label in a lead's name": lambda: p.set_gold_label(1, "push", lead="lead"),
        "set_gold_segments": lambda: p.set_gold_segments(1, [("push", 0, 4)], lead="lead"),
        "set_gold_captions": lambda: p.set_gold_captions(1, ["a hand pushes a block"], lead="lead"),
        "add_comment": lambda: p.add_comment(1, "look again", annotator="ann-b", lead="lead"),
        "comment_to_annotators": lambda: p.comment_to_annotators(1, "look again", lead="lead"),
        "set_role": lambda: p.set_role("ann-a", "lead"),
        "set_blind": lambda: p.set_blind(False),
        "set_lease": lambda: p.set_lease(5),
        "assign": lambda: p.assign(per_clip=2),
        "check_reviewer": lambda: p.check_reviewer(),
        "review_queue": lambda: p.review_queue(n_boot=10),
        "most_disputed_clip": lambda: p.most_disputed_clip(),
        "clip_comparison": lambda: p.clip_comparison(1),
        "export_records": lambda: p.export_records(tmp / "dump.jsonl"),
        "export_labels_csv": lambda: p.export_labels_csv(tmp / "dump.csv"),
        "plan_export": lambda: p.plan_export(),
        "plan_folds": lambda: p.plan_folds(2),
        "require_export_right": lambda: p.require_export_right(),
        "import of a clip record": lambda: p.import_records(_jsonl(
            tmp / "clip.jsonl", {"type": "clip", "clip": "g2/spare.mp4"})),
        "import of a gold record": lambda: p.import_records(_jsonl(
            tmp / "gold.jsonl", {"type": "gold", "clip": "1", "annotator": "lead", "label": "push"})),
        "import of a comment record": lambda: p.import_records(_jsonl(
            tmp / "note.jsonl", {"type": "comment", "clip": "1", "annotator": "lead", "to": "ann-b",
                                 "text": "psst"})),
    }


def test_every_lead_only_action_is_refused_to_an_annotator(folder, tmp_path, make_video):
    with Project.open(folder, user="lead") as lead:
        before = _state(lead)
    with Project.open(folder, user="ann-a") as p:
        refused = {}
        for name, act in _actions(p, tmp_path, make_video).items():
            with pytest.raises(NotALeadError) as err:
                act()
            refused[name] = str(err.value)
    assert all("'ann-a' is an annotator" in m or "'ann-a' is not a lead" in m
               for m in refused.values()), refused
    assert "only a lead may change the label set; 'ann-a' is an annotator" in refused["define_labels"]
    with Project.open(folder, user="lead") as lead:
        assert _state(lead) == before  # nothing was written
    assert not (tmp_path / "dump.jsonl").exists() and not (tmp_path / "dump.csv").exists()
    assert not any(p.name.startswith("outside") for p in (folder / "media").iterdir())


def test_a_person_not_in_the_project_is_refused_too(folder):
    with Project.open(folder, user="stranger") as p:
        with pytest.raises(NotALeadError, match="'stranger' is not a person in this project"):
            p.define_labels(["only this"])


def test_the_same_actions_work_for_a_lead(folder, tmp_path, make_video):
    with Project.open(folder, user="lead") as p:
        actions = _actions(p, tmp_path, make_video)
        actions["define_labels"] = actions.pop("define_labels")  # last: the others use the labels
        for name, act in actions.items():
            if name in ("add_media", "import of a clip record", "plan_folds"):
                continue  # the spare clip is added once, by add_clip; too few groups for folds
            act()
        assert ("mallory", "lead") in [(a.name, a.role) for a in p.annotators()]
        assert [l.name for l in p.labels()] == ["only this"]


def test_an_annotators_own_work_is_not_lead_only(folder, tmp_path):
    with Project.open(folder, user="ann-b") as p:
        p.set_clip_label(2, "ann-b", "push")
        p.add_caption(2, "ann-b", "a hand pushes a block")
        p.set_clip_state(2, "ann-b", "submitted")
        assert p.next_clip() is not None
        counts = p.import_records(_jsonl(tmp_path / "mine.jsonl", {
            "type": "label", "clip": "3", "annotator": "ann-b", "label": "pick up"}))
        assert counts["label"] == 1
        assert [l.name for l in p.labels()] == LABELS  # listing the label set is for everyone


def test_a_new_project_without_a_lead_lets_its_maker_set_it_up(tmp_path):
    with Project.create(tmp_path / "p", user="maker") as p:
        assert p.role("maker") == "lead"
        p.define_labels(LABELS)


def test_the_cli_refuses_an_annotator_with_one_line_and_exit_1(folder, capsys):
    rc = main(["labels", str(folder), "only this", "--user", "ann-a"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 1
    assert err == ["clipscribe: error: only a lead may change the label set; 'ann-a' is an annotator"]
    rc = main(["add-person", str(folder), "--user", "ann-a", "mallory", "--role", "lead"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 1 and err == ["clipscribe: error: only a lead may add people; 'ann-a' is an annotator"]
    with Project.open(folder, user="lead") as p:
        assert [l.name for l in p.labels()] == LABELS
        assert "mallory" not in [a.name for a in p.annotators()]
