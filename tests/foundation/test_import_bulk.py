"""Importing many labels and captions at once: the same rows and history as writing them one
by one through the API, all or nothing, undoable, and other writers are not kept waiting
while the file is checked."""

from __future__ import annotations

import json
import random
import re
import sqlite3
import threading
from pathlib import Path

import pytest
from sqlalchemy import text

from clipscribe import Project, RecordError
from clipscribe.media import JobCancelled
from clipscribe.store.models import Clip

LABELS = ["pick up", "put down", "stack"]
PEOPLE = [f"ann-{i}" for i in range(10)]
WORDS = ["the arm lifts the cup", "a hand stacks two blocks", "the gripper lets go",
         "someone pushes the box", "the block falls over", "nothing moves"]


def _project(folder: Path, clips: int) -> Project:
    """A project with ``clips`` clip rows (no media needed to label them), ten annotators and
    some work stored already: labels, captions and segments."""
    p = Project.create(folder, user="lead")
    p.define_labels(LABELS)
    for name in PEOPLE:
        p.add_annotator(name)
    p._write(lambda s: s.add_all([
        Clip(path=f"g{i % 7}/c{i:05d}.mp4", sha256=f"{i:064x}", fps=25.0, frame_count=100,
             duration=4.0, width=64, height=48) for i in range(clips)]))
    for i in range(1, 41):
        p.set_clip_label(i, PEOPLE[0], LABELS[i % 3])
    for i in range(1, 21):
        p.add_caption(i, PEOPLE[1], WORDS[i % len(WORDS)])
        p.add_segment(i, PEOPLE[2], "stack", 0, 10)
        p.add_segment(i, PEOPLE[2], "pick up", 10, 20)
    return p


def _records(n_labels: int, n_captions: int, clips: int, seed: int = 7) -> list[dict]:
    """Label and caption records in a mixed order, with repeats of every kind the import has
    to recognise, and one segment that later captions are tied to."""
    rng = random.Random(seed)
    pairs = [(c, a) for c in range(1, clips + 1) for a in PEOPLE]
    rng.shuffle(pairs)

    def ref(c: int) -> str:  # an id or the media path, both resolve to the clip
        return str(c) if rng.random() < 0.5 else f"g{(c - 1) % 7}/c{c - 1:05d}.mp4"
    labels = [{"type": "label", "clip": ref(c), "annotator": a, "label": rng.choice(LABELS)}
              for c, a in pairs[:n_labels]]
    captions = []
    for _ in range(n_captions):
        c, a = rng.randint(1, clips), rng.choice(PEOPLE)
        rec = {"type": "caption", "clip": ref(c), "annotator": a,
               "text": f"{rng.choice(WORDS)} ({rng.randint(0, 30)})"}
        if a == PEOPLE[2] and c <= 20 and rng.random() < 0.5:
            rec["segment"] = rng.choice([[0, 10], [10, 20]])
        captions.append(rec)
    stored = [{"type": "caption", "clip": str(i), "annotator": PEOPLE[1], "text": WORDS[i % len(WORDS)]}
              for i in range(1, 6)]  # identical to stored captions: not added again
    out = labels + captions + stored
    rng.shuffle(out)
    out += rng.sample(out, 50)  # the same line again: a duplicate
    again = [r for r in labels[:30]]
    out += [{**r, "clip": r["clip"] if not r["clip"].isdigit() else
             f"g{(int(r['clip']) - 1) % 7}/c{int(r['clip']) - 1:05d}.mp4"} for r in again]
    mid = len(out) // 2
    out.insert(mid, {"type": "segment", "clip": "30", "annotator": PEOPLE[3], "label": "stack",
                     "start": 5, "end": 9})
    out.insert(mid + 1, {"type": "caption", "clip": "30", "annotator": PEOPLE[3],
                         "text": "tied to the segment above", "segment": [5, 9]})
    return out


def _write(path: Path, records: list[dict]) -> Path:
    path.write_text("".join(json.dumps(r) + "\n" for r in records), encoding="utf-8")
    return path


def _by_api(p: Project, records: list[dict]) -> int:
    """What an import means, written one record at a time through the public API; returns
    how many records were taken as duplicates."""
    path_ids = {c.path: c.id for c in p.clips()}
    seen: set[str] = set()
    labelled: set[tuple[int, str]] = set()
    labels = {(c, a): l for c, a, l in p.clip_labels()}
    texts = {(c.clip, c.annotator, c.text) for c in p.caption_rows()}
    duplicates = 0
    for rec in records:
        key = json.dumps(rec, sort_keys=True)
        if key in seen:
            duplicates += 1
            continue
        seen.add(key)
        clip = int(rec["clip"]) if rec["clip"].isdigit() else path_ids[rec["clip"]]
        who = rec["annotator"]
        if rec["type"] == "label":
            if (clip, who) in labelled:  # the same label: the file names no other
                duplicates += 1
                continue
            labelled.add((clip, who))
            if labels.get((clip, who)) != rec["label"]:
                p.set_clip_label(clip, who, rec["label"])
                labels[(clip, who)] = rec["label"]
        elif rec["type"] == "segment":
            p.add_segment(clip, who, rec["label"], rec["start"], rec["end"])
        elif (clip, who, rec["text"]) not in texts:
            segment = None
            if "segment" in rec:
                segment = next(g.id for g in p.segments(clip=clip, annotator=who)
                               if [g.start, g.end] == rec["segment"])
            p.add_caption(clip, who, rec["text"], segment=segment)
            texts.add((clip, who, rec["text"]))
    return duplicates


TIMES = ("updated_at", "assigned_at", "at", "added_at", "created_at")


def _content(p: Project) -> dict[str, list]:
    """Every row of the tables an import writes, as stored (JSON as its text); of a time only
    its form is kept (every digit a 0, no fraction of a second)."""
    out = {}
    with p.engine.connect() as conn:
        for table in ("clip_labels", "captions", "assignments", "segments", "clips", "edits"):
            rows = conn.execute(text(f"SELECT * FROM {table} ORDER BY id")).mappings()
            out[table] = [{k: _untimed(k, v) for k, v in r.items()} for r in rows]
    return out


def _untimed(key, v):
    if key in TIMES:
        # (a time on a whole second is written without its fraction)
        return re.sub(r"\d", "0", re.sub(r"\.\d{6}", "", v)) if isinstance(v, str) else v
    if isinstance(v, str) and v.startswith("{"):
        return {k: _untimed(k, x) for k, x in json.loads(v).items()}
    return v


@pytest.mark.parametrize("size", [pytest.param(1500, id="1500+1500"),
                                  pytest.param(5000, id="5000+5000", marks=pytest.mark.slow)])
def test_bulk_import_gives_the_rows_and_history_of_one_write_per_record(tmp_path, size):
    clips = size // len(PEOPLE) + 20
    records = _records(size, size, clips)
    src = _write(tmp_path / "in.jsonl", records)
    with _project(tmp_path / "bulk", clips) as p, _project(tmp_path / "api", clips) as q:
        counts = p.import_records(src)
        duplicates = _by_api(q, records)
        got, want = _content(p), _content(q)
        for table in want:
            assert got[table] == want[table], table
        history = q.history()
        assert counts["label"] == sum(e.entity == "clip_label" for e in history) - 40
        assert counts["caption"] == sum(e.entity == "caption" for e in history) - 20
        assert counts["duplicate"] == duplicates >= 80  # 50 lines again, 30 labels named twice
        assert counts["segment"] == 1
        states = {c.id: c.state for c in p.clips()}
        assert {states[c] for c, _, _ in p.clip_labels()} == {"in_progress"}


def test_import_again_changes_nothing(tmp_path):
    records = _records(600, 600, 80)
    src = _write(tmp_path / "in.jsonl", records)
    with _project(tmp_path / "p", 80) as p:
        p.import_records(src)
        before = _content(p)
        counts = p.import_records(src)
        assert (counts["label"], counts["caption"], counts["segment"]) == (0, 0, 0)
        assert _content(p) == before


def test_an_error_on_the_last_line_leaves_nothing_written(tmp_path):
    records = _records(600, 600, 80)
    records.append({"type": "caption", "clip": "g0/nowhere.mp4", "annotator": PEOPLE[0],
                    "text": "the last line names a clip that is not there"})
    src = _write(tmp_path / "in.jsonl", records)
    with _project(tmp_path / "p", 80) as p:
        before = _content(p)
        with pytest.raises(RecordError) as err:
            p.import_records(src)
        assert f"{src}:{len(records)}: field 'clip'" in str(err.value)
        assert "no such clip" in str(err.value)
        assert _content(p) == before


def test_the_first_problem_in_file_order_is_named(tmp_path):
    """A clash of two labels on line 3 is named before an unknown person on line 4."""
    with _project(tmp_path / "p", 40) as p:
        src = _write(tmp_path / "in.jsonl", [
            {"type": "caption", "clip": "1", "annotator": PEOPLE[0], "text": "fine"},
            {"type": "label", "clip": "2", "annotator": PEOPLE[0], "label": "stack"},
            {"type": "label", "clip": "g1/c00001.mp4", "annotator": PEOPLE[0], "label": "pick up"},
            {"type": "label", "clip": "3", "annotator": "nobody", "label": "stack"},
        ])
        before = _content(p)
        with pytest.raises(RecordError, match=r"in.jsonl:3: .*line 2 and 'pick up' on line 3"):
            p.import_records(src)
        assert _content(p) == before


def test_imported_labels_and_captions_undo_through_revert(tmp_path):
    with _project(tmp_path / "p", 40) as p:
        src = _write(tmp_path / "in.jsonl", [
            {"type": "label", "clip": "1", "annotator": PEOPLE[0], "label": "stack"},  # was put down
            {"type": "label", "clip": "2", "annotator": PEOPLE[5], "label": "pick up"},
            {"type": "caption", "clip": "2", "annotator": PEOPLE[5], "text": "a new caption"},
        ])
        assert {(c, a): l for c, a, l in p.clip_labels()}[(1, PEOPLE[0])] == "put down"
        with p.recording() as ids:
            p.import_records(src)
        assert len(ids) == 3
        assert [e.id for e in p.history()][-3:] == ids
        p.revert(ids)
        labels = {(c, a): l for c, a, l in p.clip_labels()}
        assert labels[(1, PEOPLE[0])] == "put down" and (2, PEOPLE[5]) not in labels
        assert p.captions(clip=2, annotator=PEOPLE[5]) == []
        redo = [e.id for e in p.history()][-3:]
        p.revert(redo)
        assert {(c, a): l for c, a, l in p.clip_labels()}[(2, PEOPLE[5])] == "pick up"
        assert [t for _, _, t in p.captions(clip=2, annotator=PEOPLE[5])] == ["a new caption"]


def test_another_writer_is_not_kept_waiting_while_the_file_is_checked(tmp_path):
    records = _records(300, 300, 40)
    src = _write(tmp_path / "in.jsonl", records)
    with _project(tmp_path / "p", 40) as p, Project.open(tmp_path / "p", user="lead") as other:
        wrote: list[int] = []
        phases: list[str] = []

        def progress(done: int, total: int) -> None:
            if done == 0 and not wrote:  # the first report: the file is being checked
                phases.append("checking")
                raw = sqlite3.connect(p.folder / "project.sqlite", timeout=0)
                try:  # the write lock is free: taken at once, without waiting
                    raw.execute("BEGIN IMMEDIATE")
                    raw.rollback()
                finally:
                    raw.close()
                wrote.append(other.add_caption(7, PEOPLE[4], "written while the import checks"))
        counts = p.import_records(src, progress=progress)
        assert phases == ["checking"] and counts["caption"] > 0
        assert "written while the import checks" in [t for _, _, t in p.captions(clip=7)]


def test_progress_rises_to_the_end_and_cancel_writes_nothing(tmp_path):
    records = _records(2500, 0, 260)
    src = _write(tmp_path / "in.jsonl", records)
    with _project(tmp_path / "p", 260) as p:
        before = _content(p)
        cancel = threading.Event()

        def stop_midway(done: int, total: int) -> None:
            if done >= total // 4:
                cancel.set()
        with pytest.raises(JobCancelled):
            p.import_records(src, progress=stop_midway, cancel=cancel)
        assert _content(p) == before
        seen: list[tuple[int, int]] = []
        p.import_records(src, progress=lambda d, t: seen.append((d, t)))
        assert seen[-1][0] == seen[-1][1] == 2 * len(records)
        assert [d for d, _ in seen] == sorted(d for d, _ in seen)


def test_labels_csv_goes_the_same_way(tmp_path):
    with _project(tmp_path / "p", 40) as p:
        src = tmp_path / "l.csv"
        src.write_text("clip,annotator,label\n1,ann-0,stack\n2,ann-3,stack\n"
                       "g1/c00001.mp4,ann-3,stack\n4,ann-4,pick up\n")
        with p.recording() as ids:
            assert p.import_records(src) == {"label": 3, "duplicate": 1}
        assert [(e.entity, e.action, e.before is None) for e in p.history()[-3:]] == [
            ("clip_label", "set", False), ("clip_label", "set", True), ("clip_label", "set", True)]
        assert len(ids) == 3
        assert p.import_records(src) == {"label": 0, "duplicate": 1}
