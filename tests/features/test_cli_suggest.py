"""``clipscribe suggest``: a clear refusal when labels are too few, JSON with the four streams."""

from __future__ import annotations

import json

from clipscribe.cli import main

from .test_project_suggestions import labelled  # noqa: F401 (fixture)


def test_suggest_lists_suggestions_as_json(labelled, capsys):  # noqa: F811
    folder, ids = labelled
    assert main(["suggest", str(folder), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    by_clip = {r["clip"]: r for r in out["clips"]}
    assert by_clip[ids["new"]]["suggestions"][0][0] == "right"
    assert out["trained_on"] == 16


def test_compare_prints_the_four_streams_as_json(labelled, capsys):  # noqa: F811
    folder, _ = labelled
    assert main(["suggest", str(folder), "--compare", "--json", "--folds", "3"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out["accuracy"]) == {"single-frame", "appearance", "motion", "fused"}
    assert out["fusion_weight"]["appearance"] + out["fusion_weight"]["motion"] == 1


def test_too_few_labels_is_one_line_and_status_1(tmp_path, capsys):
    from clipscribe import Project
    with Project.create(tmp_path / "p") as p:
        p.define_labels(["a", "b"])
    assert main(["suggest", str(tmp_path / "p")]) == 1
    err = capsys.readouterr().err
    assert err.startswith("clipscribe: error: not enough labels yet: 0 of 10")


def test_least_certain_lists_the_smallest_margin_first_and_shown_is_stored(labelled, capsys):  # noqa: F811
    folder, _ = labelled
    assert main(["suggest", str(folder), "--json", "--least-certain"]) == 0
    rows = json.loads(capsys.readouterr().out)["clips"]
    margins = [r["margin"] for r in rows if r["margin"] is not None]
    assert len(margins) >= 20 and margins == sorted(margins)
    assert main(["suggest", str(folder), "--shown", "on"]) == 0
    assert "annotators see suggestions: on" in capsys.readouterr().out
    from clipscribe import Project
    with Project.open(folder) as p:
        assert p.suggestion_visibility() == "on"


def test_hand_out_reserves_a_batch(labelled, capsys):  # noqa: F811
    folder, _ = labelled
    from clipscribe import Project
    with Project.open(folder) as p:
        p.add_annotator("ann-3")
        p.assign(per_clip=3)
    assert main(["suggest", str(folder), "--hand-out", "ann-3", "--batch", "3", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert len(out["clips"]) == 3
    with Project.open(folder) as p:  # pulled in the order handed out
        assert p.next_clip("ann-3") == out["clips"][0]
