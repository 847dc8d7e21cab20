"""Export from a project: gold first, stable splits across exports, leads only."""

from __future__ import annotations

import json

import pytest

from clipscribe import Project, RecordError


def test_export_uses_gold_and_stays_stable(sample_copy, tmp_path, make_video):
    with Project.open(sample_copy) as p:
        p.set_gold_label(3, "stack")  # annotators 2 and 3 said "put down"
        plan = p.plan_export(seed=3)
        assert plan.decisions["3"].label == "stack" and plan.decisions["3"].source == "gold"
        assert set(plan.assignment.values()) == {"train", "val", "test"}
        first = p.write_export(tmp_path / "one", plan)
        rows = [json.loads(l) for f in ("train", "val", "test")
                for l in (tmp_path / "one" / f"{f}.jsonl").read_text().splitlines()]
        assert {r["clip"]: r["label"] for r in rows}["3"] == "stack"
        # a new clip in an existing group follows it; nothing already assigned moves
        new = p.add_clip(make_video(p.media_root / "cell-north" / "take-99.mp4"), group="cell-north")
        p.set_clip_label(new, "annotator-1", "push")
        p.set_clip_label(new, "annotator-2", "push")
        second = p.plan_export(seed=99)
        for clip, split in first.assignment.items():
            assert second.assignment[clip] == split
        assert second.assignment[str(new)] == second.assignment["1"]  # clip 1 is in cell-north


def test_only_leads_export(sample_copy, tmp_path):
    with Project.open(sample_copy, user="annotator-1") as p:
        with pytest.raises(RecordError, match="only a lead may export"):
            p.plan_export()
