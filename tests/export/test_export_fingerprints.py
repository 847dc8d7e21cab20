"""An export never computes fingerprints inside its check unasked: it counts the clips that
lack one, reports them as not checked for near duplicates (counted in the manifest), and
computes them through the compute path only when asked (CLI ``--compute-missing``,
``plan_export(compute_missing=True)``, the dialog's button)."""

import json

from clipscribe import Project
from clipscribe.cli import main


def _add_unfingerprinted(folder, make_video, n=2):
    """Add ``n`` new clips (new footage, so no fingerprint yet); their ids as strings."""
    with Project.open(folder) as p:
        assert p.missing_fingerprints() == 0  # the sample comes with its fingerprints
        ids = []
        for i in range(n):
            path = p.media_root / "extra" / f"new-{i}.mp4"
            path.parent.mkdir(exist_ok=True)
            make_video(path, n=12, seed=100 + i)
            ids.append(str(p.add_clip(path, group="extra")))
            p.set_clip_label(ids[-1], "annotator-1", "push")
        assert p.missing_fingerprints() == n
    return ids


def test_the_check_reports_missing_fingerprints_and_computes_none(sample_copy, make_video,
                                                                   tmp_path):
    ids = _add_unfingerprinted(sample_copy, make_video)
    with Project.open(sample_copy) as p:
        plan = p.plan_export(progress=lambda d, t: (_ for _ in ()).throw(AssertionError(
            "progress of a computation that must not run")))
        assert p.missing_fingerprints() == 2  # nothing computed by the check
        (f,) = [f for f in plan.leakage.findings if f.kind == "no-fingerprint"]
        assert f.severity == "warning" and sorted(f.clips) == sorted(ids)
        assert plan.leakage.recipe["clips_without_fingerprint"] == 2
        m = p.write_export(tmp_path / "out", plan)
    manifest = json.loads((tmp_path / "out" / "manifest.json").read_text())
    assert manifest["leakage"]["recipe"]["clips_without_fingerprint"] == 2
    assert manifest["leakage"]["counts"]["no-fingerprint"] == 1 and m is not None


def test_plan_computes_missing_fingerprints_when_asked(sample_copy, make_video):
    _add_unfingerprinted(sample_copy, make_video)
    seen = []
    with Project.open(sample_copy) as p:
        plan = p.plan_export(compute_missing=True, progress=lambda d, t: seen.append((d, t)))
        assert p.missing_fingerprints() == 0
        assert seen and seen[-1] == (2, 2)  # progress of the two computed clips
        assert "no-fingerprint" not in plan.leakage.counts()
        assert plan.leakage.recipe["clips_without_fingerprint"] == 0


def test_cli_says_how_many_are_missing_and_offers_to_compute(sample_copy, make_video, tmp_path,
                                                              capsys):
    _add_unfingerprinted(sample_copy, make_video, n=3)
    out = tmp_path / "out"
    assert main(["export", str(sample_copy), str(out), "--dry-run"]) == 0
    text = capsys.readouterr().out
    assert "fingerprints: 3 clip(s) have none" in text and "--compute-missing" in text
    assert "[warning] no-fingerprint: 3 clips have no fingerprint" in text
    with Project.open(sample_copy) as p:
        assert p.missing_fingerprints() == 3
    assert main(["export", str(sample_copy), str(out), "--dry-run", "--compute-missing",
                 "--workers", "0"]) == 0
    text = capsys.readouterr().out
    assert "fingerprints: computed 3 of 3 missing" in text and "no-fingerprint" not in text
    with Project.open(sample_copy) as p:
        assert p.missing_fingerprints() == 0
    assert main(["export", str(sample_copy), str(out), "--dry-run"]) == 0
    assert "fingerprints:" not in capsys.readouterr().out  # nothing missing: nothing said
