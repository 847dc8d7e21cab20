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
