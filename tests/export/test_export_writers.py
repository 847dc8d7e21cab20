"""Writers: valid JSON Lines and WebVTT, trustworthy manifest, all-or-nothing folders."""

from __future__ import annotations

import csv
import dataclasses
import hashlib
import html
import json
import os
import threading
from pathlib import Path

import jsonschema
import pytest
import webvtt

from clipscribe._version import __version__
from clipscribe.export import (
    CaptionInput, ClipInput, ExportBlocked, ExportCancelled, ExportError, LabelPolicy, Override,
    SegmentInput, build_plan, export_schemas, write_export,
)

RATIOS = {"train": 0.6, "val": 0.2, "test": 0.2}


def _clips(tmp_path: Path, n: int = 24, *, write_media: bool = False) -> list[ClipInput]:
    media = tmp_path / "media"
    media.mkdir(exist_ok=True)
    out = []
    for i in range(n):
        data = f"video bytes {i}".encode()
        path = media / f"clip {i}.MP4"
        if write_media:
            path.write_bytes(data)
        labels = ("pour", "pour", "stir") if i % 3 else ("stir", "stir")
        out.append(ClipInput(
            clip_id=f"{i}", media_path=f"clip {i}.MP4", source_path=str(path),
            group=f"cook{i // 4}",
            sha256=hashlib.sha256(data).hexdigest(), fingerprint=(i * 0x9E3779B97F4A7C15) % 2**64,
            fps=30.0, frame_count=300, labels=labels,
            captions=(CaptionInput(f'cook {i} pours "milk", slowly & <carefully>'),
                      CaptionInput(f"cook {i} stirs the pot", segment=(30, 120)),
                      CaptionInput("rejected", accepted=False)),
            segments=(SegmentInput("pour", 0, 90), SegmentInput("stir", 90, 301 - i)),
            consent=True, licence="CC-BY-4.0"))
    out.append(ClipInput("tie", "tie.mp4", labels=("pour", "stir")))
    return out


def _plan(tmp_path, **kw):
    return build_plan(_clips(tmp_path, write_media=kw.pop("write_media", False)), RATIOS,
                      project="kitchen", seed=3, **kw)


def _leaky_plan(tmp_path):
    clips = _clips(tmp_path)
    clips[1] = dataclasses.replace(clips[1], sha256=clips[0].sha256, group=None)
    return build_plan(clips, {"train": 0.5, "test": 0.5}, seed=0,
                      frozen={"0": "train", "1": "test"})


def test_jsonl_validates_against_generated_schema(tmp_path):
    plan = _plan(tmp_path)
    write_export(tmp_path / "out", plan)
    schemas = export_schemas()
    # Reference: the jsonschema package's Draft 2020-12 validator (pydantic emits 2020-12).
    jsonschema.Draft202012Validator.check_schema(schemas["ExportRecord"])
    validator = jsonschema.Draft202012Validator(schemas["ExportRecord"])
    n = 0
    for split in RATIOS:
        for line in (tmp_path / "out" / f"{split}.jsonl").read_text("utf-8").splitlines():
            rec = json.loads(line)
            validator.validate(rec)
            assert rec["split"] == split
            n += 1
    assert n == 24
    manifest = json.loads((tmp_path / "out" / "manifest.json").read_text("utf-8"))
    jsonschema.Draft202012Validator(schemas["ExportManifest"]).validate(manifest)


def test_schema_rejects_a_broken_record():
    validator = jsonschema.Draft202012Validator(export_schemas()["ExportRecord"])
    with pytest.raises(jsonschema.ValidationError):
        validator.validate({"clip": "1", "split": "train", "media": "a.mp4", "annotators": -1})


def test_manifest_checksums_counts_and_recipe(tmp_path):
    plan = _plan(tmp_path)
    m = write_export(tmp_path / "out", plan, webvtt=True)
    out = tmp_path / "out"
    on_disk = sorted(str(p.relative_to(out)) for p in out.rglob("*")
                     if p.is_file() and p.name != "manifest.json")
    assert [f.path for f in m.files] == on_disk
    for f in m.files:
        data = (out / f.path).read_bytes()
        assert hashlib.sha256(data).hexdigest() == f.sha256 and len(data) == f.bytes
    assert m.format == "clipscribe-export/1" and m.tool_version == __version__
    assert m.project == "kitchen" and m.seed == 3
    assert m.ratios == pytest.approx(RATIOS)
    assert sum(m.totals.values()) == 24
    recs = [json.loads(x) for s in RATIOS for x in (out / f"{s}.jsonl").read_text().splitlines()]
    for s in RATIOS:
        for lab, k in m.counts[s].items():
            assert k == sum(1 for r in recs if r["split"] == s and r["label"] == lab)
    assert [(x.clip, x.reason) for x in m.left_out] == [("tie", "tie between 'pour' and 'stir'")]
    assert {"counts", "totals", "agreement", "files", "splits"} <= set(m.recipes)
    assert m.assignment == plan.assignment
    assert m.label_policy.min_agreement == LabelPolicy().min_agreement


def test_webvtt_files_parse_with_webvtt_py(tmp_path):
    write_export(tmp_path / "out", _plan(tmp_path), webvtt=True)
    # Reference reader: webvtt-py's webvtt.read (independent of our writer).
    vtt = webvtt.read(str(tmp_path / "out" / "webvtt" / "5.vtt"))
    cues = [(c.identifier, c.start, c.end, html.unescape(c.text)) for c in vtt]
    # cues in start-time order, as W3C WebVTT requires; uncaptioned spans are the whole clip
    assert cues == [
        ("segment-1", "00:00:00.000", "00:00:03.000", "pour"),  # 90 frames / 30 fps
        ("caption-1", "00:00:00.000", "00:00:10.000", 'cook 5 pours "milk", slowly & <carefully>'),
        ("caption-2", "00:00:01.000", "00:00:04.000", "cook 5 stirs the pot"),
        ("segment-2", "00:00:03.000", "00:00:09.867", "stir"),  # 296 frames / 30 fps
    ]
    assert len(list((tmp_path / "out" / "webvtt").iterdir())) == 24


def test_csv_files_round_trip(tmp_path):
    write_export(tmp_path / "out", _plan(tmp_path))
    out = tmp_path / "out"
    rows = [r for s in RATIOS for r in csv.DictReader(open(out / f"{s}.csv", encoding="utf-8"))]
    caps = [r for s in RATIOS
            for r in csv.DictReader(open(out / f"{s}_captions.csv", encoding="utf-8"))]
    segs = [r for s in RATIOS
            for r in csv.DictReader(open(out / f"{s}_segments.csv", encoding="utf-8"))]
    assert len(rows) == 24 and len(caps) == 48 and len(segs) == 48
    assert 'cook 7 pours "milk", slowly & <carefully>' in {r["text"] for r in caps}
    assert {r["label_source"] for r in rows} == {"majority"}


def test_blocked_export_writes_nothing(tmp_path):
    plan = _leaky_plan(tmp_path)
    assert plan.leakage.blocking
    before = sorted(os.listdir(tmp_path))
    with pytest.raises(ExportBlocked, match="duplicate-media"):
        write_export(tmp_path / "out", plan, webvtt=True)
    assert sorted(os.listdir(tmp_path)) == before


def test_override_is_recorded(tmp_path):
    plan = _leaky_plan(tmp_path)
    m = write_export(tmp_path / "out", plan, override=Override("dana", "re-encode, kept apart"))
    assert (m.override.by, m.override.reason) == ("dana", "re-encode, kept apart")
    assert m.override.findings == len(plan.leakage.blocking) > 0
    saved = json.loads((tmp_path / "out" / "manifest.json").read_text())
    assert saved["override"]["by"] == "dana" and saved["leakage"]["blocking"]
    with pytest.raises(ValueError):
        Override("", "why")


def test_refuses_non_empty_folder_unless_overwrite(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("mine")
    with pytest.raises(ExportError, match="not an empty folder"):
        write_export(out, _plan(tmp_path))
    assert os.listdir(out) == ["keep.txt"]
    write_export(out, _plan(tmp_path), overwrite=True)
    assert not (out / "keep.txt").exists() and (out / "manifest.json").exists()
    assert sorted(os.listdir(tmp_path)) == ["media", "out"]  # no temporary folders left


def test_empty_existing_folder_is_used(tmp_path):
    (tmp_path / "out").mkdir()
    write_export(tmp_path / "out", _plan(tmp_path))
    assert (tmp_path / "out" / "train.jsonl").exists()


def test_cancel_leaves_nothing_and_progress_counts_up(tmp_path):
    seen = []
    cancel = threading.Event()

    def progress(done, total):
        seen.append((done, total))
        if done >= 10:
            cancel.set()

    with pytest.raises(ExportCancelled):
        write_export(tmp_path / "out", _plan(tmp_path), progress=progress, cancel=cancel)
    assert sorted(os.listdir(tmp_path)) == ["media"]
    assert seen and [d for d, _ in seen] == sorted(d for d, _ in seen)
    calls = []
    write_export(tmp_path / "out2", _plan(tmp_path), webvtt=True,
                 progress=lambda d, t: calls.append((d, t)))
    assert calls[-1] == (48, 48)


@pytest.mark.parametrize("mode", ["copy", "hardlink"])
def test_media_copy_and_hardlink(tmp_path, mode):
    m = write_export(tmp_path / "out", _plan(tmp_path, write_media=True), media_mode=mode)
    out = tmp_path / "out"
    rec = json.loads((out / "train.jsonl").read_text().splitlines()[0])
    assert rec["media"].startswith("media/train/") and rec["media"].endswith(".mp4")
    assert hashlib.sha256((out / rec["media"]).read_bytes()).hexdigest() == rec["sha256"]
    assert rec["media"] in {f.path for f in m.files}
    if mode == "hardlink":
        src = tmp_path / "media" / f"clip {rec['clip']}.MP4"
        assert os.stat(src).st_ino == os.stat(out / rec["media"]).st_ino


def test_missing_media_fails_and_leaves_nothing(tmp_path):
    with pytest.raises(ExportError, match="does not exist"):
        write_export(tmp_path / "out", _plan(tmp_path), media_mode="copy")
    assert sorted(os.listdir(tmp_path)) == ["media"]


def test_manifest_assignment_keeps_next_export_stable(tmp_path):
    first = write_export(tmp_path / "a", _plan(tmp_path))
    more = _clips(tmp_path) + [ClipInput(f"x{i}", f"x{i}.mp4", group="cook0", labels=("stir",))
                               for i in range(3)]
    plan = build_plan(more, RATIOS, seed=11, frozen=first.assignment)
    assert all(plan.assignment[c] == s for c, s in first.assignment.items())
    assert {plan.assignment[f"x{i}"] for i in range(3)} == {first.assignment["0"]}


def test_segments_without_fps_rejected(tmp_path):
    with pytest.raises(ValueError, match="no fps"):
        build_plan([ClipInput("a", "a.mp4", labels=("x",), segments=(SegmentInput("x", 0, 5),))],
                   RATIOS)
