"""The "inferred" label rule: gold first, else the inferred true label when its posterior
reaches the threshold; the project passes Dawid-Skene posteriors in and the manifest records
the rule with the inference's recipe."""

from __future__ import annotations

import json

import pytest

from clipscribe import Project, RecordError
from clipscribe.agreement import dawid_skene
from clipscribe.export import ClipInput, LabelPolicy, apply_policy, decide_inferred

# (labels, posterior, gold, min_posterior, label, source, posterior of the decision, reason)
CASES = [
    (["run", "walk"], {"run": 0.95, "walk": 0.05}, None, 0.9, "run", "inferred", 0.95, None),
    (["run", "walk"], {"run": 0.95, "walk": 0.05}, "walk", 0.9, "walk", "gold", 0.05, None),
    (["run", "run", "walk"], {"run": 0.3, "walk": 0.7}, None, 0.9, None, None, 0.7,
     "inferred 'walk' 0.70 below minimum 0.90"),
    (["run", "run", "walk"], {"run": 0.3, "walk": 0.7}, None, 0.7, "walk", "inferred", 0.7, None),
    (["run", "walk"], {"run": 0.5, "walk": 0.5}, None, 0.0, None, None, 0.5,
     "tie between 'run' and 'walk'"),
    ([], {}, None, 0.9, None, None, None, "no labels"),
    (["run"], {}, None, 0.9, None, None, None, "no inferred label"),
]


@pytest.mark.parametrize("labels,post,gold,minp,label,source,prob,reason", CASES)
def test_inferred_decision_table(labels, post, gold, minp, label, source, prob, reason):
    d = decide_inferred(labels, post, gold, min_posterior=minp, clip_id="4")
    assert (d.label, d.source, d.reason) == (label, source, reason)
    assert d.posterior == (None if prob is None else pytest.approx(prob))
    assert d.annotators == len(labels)
    if label is not None and labels:
        assert d.agreement == pytest.approx(labels.count(label) / len(labels))


def test_inferred_rule_can_overrule_the_majority_and_is_described():
    clip = ClipInput("1", "a.mp4", labels=("put down", "put down", "stack"),
                     posterior=(("put down", 0.04), ("stack", 0.96)))
    majority, inferred = (apply_policy([clip], LabelPolicy(labels=rule))[0]
                          for rule in ("majority", "inferred"))
    assert (majority.label, majority.source) == ("put down", "majority")
    assert (inferred.label, inferred.source) == ("stack", "inferred")
    text = LabelPolicy(labels="inferred", min_posterior=0.8).describe()
    assert "posterior probability is >= 0.80" in text and "majority label" not in text
    with pytest.raises(ValueError, match="labels must be one of"):
        LabelPolicy(labels="vote")  # type: ignore[arg-type]
    with pytest.raises(ValueError, match="min_posterior"):
        LabelPolicy(labels="inferred", min_posterior=1.5)


def test_project_export_with_inferred_labels(sample_copy, sample_lead, tmp_path):
    with Project.open(sample_copy, user=sample_lead) as p:
        inf = dawid_skene(p.agreement_inputs()["labels"],
                          label_order=[l.name for l in p.labels()])
        gold = p.gold_labels()
        plan = p.plan_export(labels="inferred", min_posterior=0.9)
        for cid, d in plan.decisions.items():
            c = int(cid)
            if c in gold:
                assert (d.label, d.source) == (gold[c], "gold")
            else:
                assert (d.label, d.source) == (inf.labels[c], "inferred")
                assert d.posterior == pytest.approx(max(inf.posterior[c].values()))
                assert d.posterior >= 0.9
        for d in plan.left_out:
            assert int(d.clip_id) not in gold
            assert d.reason.startswith(("inferred", "tie", "no labels")), d.reason
        strict = p.plan_export(labels="inferred", min_posterior=1.0)
        assert len(strict.decisions) <= len(plan.decisions)
        with pytest.raises(RecordError, match="labels must be one of"):
            p.plan_export(labels="vote")
        m = p.write_export(tmp_path / "out", plan)
    lp = json.loads((tmp_path / "out" / "manifest.json").read_text())["label_policy"]
    assert (lp["labels"], lp["min_posterior"]) == ("inferred", 0.9)
    assert lp["inference"]["metric"] == "truth" and lp["inference"]["variant"] == "dawid-skene"
    assert "inferred true label" in lp["rule"] and m.label_policy.labels == "inferred"
    records = [json.loads(line) for f in (tmp_path / "out").glob("*.jsonl")
               for line in f.read_text().splitlines()]
    assert records and {r["label_source"] for r in records} <= {"gold", "inferred"}
    assert all((r["label_posterior"] is not None) == (r["label_source"] == "inferred")
               or r["label_source"] == "gold" for r in records)


def test_cli_export_labels_inferred(sample_copy, tmp_path, capsys):
    from clipscribe.cli import main
    assert main(["export", str(sample_copy), str(tmp_path / "out"), "--labels", "inferred",
                 "--min-posterior", "0.95"]) == 0
    lp = json.loads((tmp_path / "out" / "manifest.json").read_text())["label_policy"]
    assert (lp["labels"], lp["min_posterior"]) == ("inferred", 0.95)
    assert main(["export", str(sample_copy), str(tmp_path / "out2")]) == 0
    lp = json.loads((tmp_path / "out2" / "manifest.json").read_text())["label_policy"]
    assert (lp["labels"], lp["min_posterior"], lp["inference"]) == ("majority", None, None)
