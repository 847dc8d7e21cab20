"""A big synthetic project for scale benchmarks: N clips from a few real video files, K
annotators with planted disagreement, C captions per annotator and clip.

The clips are symbolic links to ``--files`` small generated videos (so media checks, frame access
and fingerprints work) and their rows are written in one bulk insert; labels and captions go
through ``Project.import_records`` (the bulk path, with edit history), as a team bringing an
earlier round would. Everything is invented: a robot arm moving coloured blocks in workcells.

Planted structure (fixed by ``--seed``):
- each clip has a true label; annotator-1 is right 90 % of the time, annotator-2 85 % but calls
  every "stack" a "put down" (a systematic confusion), annotator-3 65 % and skips 10 % of clips;
  further annotators are right 80 % of the time;
- captions come from per-label templates with the moved block's colour, so annotators who agree on
  the label mostly agree in words too;
- each clip row gets its own SHA-256 (derived from its file's and its number) and, with
  ``--fingerprints``, its own random 64-bit fingerprint, except 1 % of clips that are planted
  near-duplicates (2 bits from a clip of another workcell): the leakage check has real work and
  a known answer, instead of every clip of a file being a duplicate of every other.

usage: python benchmarks/make_big_project.py DIR --clips 10000 [--annotators 3] [--captions 3]
                                             [--files 8] [--fingerprints] [--seed 0]
Prints JSON: the counts and the seconds each phase took.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path[:0] = [str(ROOT / "src"), str(ROOT / "tests")]

from clipscribe import Project  # noqa: E402
from clipscribe.media import probe  # noqa: E402
from clipscribe.media.probe import file_sha256  # noqa: E402
from clipscribe.store.models import Clip  # noqa: E402

LABELS = ["pick up", "put down", "push", "stack", "idle"]
COLOURS = ["red", "blue", "green", "yellow"]
TEMPLATES = {
    "pick up": ["the arm lifts the {c} block off the bench", "the robot picks up the {c} block",
                "the gripper raises the {c} cube from the table"],
    "put down": ["the arm sets the {c} block down on the bench", "the robot lowers the {c} cube",
                 "the gripper places the {c} block on the table"],
    "push": ["the arm pushes the {c} block along the bench", "the robot slides the {c} cube",
             "the gripper nudges the {c} block sideways"],
    "stack": ["the arm stacks the {c} block on another one", "the robot puts the {c} cube on top",
              "the gripper builds a tower with the {c} block"],
    "idle": ["the arm waits above the bench", "the robot hovers in its rest pose",
             "nothing is moved while the {c} block sits there"],
}
PLACES = ["near the left edge", "by the tool rack", "in the middle of the bench", "close to the camera",
          "beside the tray", "at the far corner", "under the lamp", "next to the scale"]
MANNER = ["slowly", "quickly", "carefully", "in one smooth move", "after a short pause", "twice",
          "with a small wobble", "without stopping"]
ACCURACY = {0: 0.90, 1: 0.85, 2: 0.65}  # by annotator index; others 0.80
SKIP = {2: 0.10}


def write_videos(folder: Path, n: int) -> list[Path]:
    from videos import write_video
    return [write_video(folder / f"source-{i}.mp4", n=24, size=(96, 72), seed=1000 + i) for i in range(n)]


def plan(n_clips: int, n_people: int, n_captions: int, seed: int) -> tuple[np.ndarray, list[dict]]:
    """(true label index per clip, records of every annotator's label and captions)."""
    rng = np.random.default_rng(seed)
    truth = rng.integers(0, len(LABELS), n_clips)
    colour = rng.integers(0, len(COLOURS), n_clips)
    records: list[dict] = []
    for k in range(n_people):
        who = f"annotator-{k + 1}"
        right = rng.random(n_clips) < ACCURACY.get(k, 0.80)
        wrong = (truth + rng.integers(1, len(LABELS), n_clips)) % len(LABELS)
        given = np.where(right, truth, wrong)
        if k == 1:  # the systematic confusion: "stack" is always called "put down"
            given = np.where(truth == LABELS.index("stack"), LABELS.index("put down"), given)
        skipped = rng.random(n_clips) < SKIP.get(k, 0.0)
        pick = rng.integers(0, 3, (n_clips, n_captions))
        place = rng.integers(0, len(PLACES), (n_clips, n_captions))
        manner = rng.integers(0, len(MANNER), (n_clips, n_captions))
        for i in np.flatnonzero(~skipped):
            clip = str(i + 1)
            records.append({"type": "label", "clip": clip, "annotator": who, "label": LABELS[given[i]]})
            for j in range(n_captions):
                text = TEMPLATES[LABELS[given[i]]][pick[i, j]].format(c=COLOURS[colour[i]])
                text = f"{text} {MANNER[manner[i, j]]} {PLACES[place[i, j]]} in take {i}"
                records.append({"type": "caption", "clip": clip, "annotator": who, "text": text})
    return truth, records


def build(folder: Path, n_clips: int, n_people: int, n_captions: int, n_files: int,
          with_fingerprints: bool, seed: int) -> dict:
    times: dict[str, float] = {}
    t = time.perf_counter()
    with Project.create(folder, user="lead") as p:
        p.define_labels(LABELS)
        for k in range(n_people):
            p.add_annotator(f"annotator-{k + 1}")
        real = write_videos(p.media_root / "_sources", n_files)
        facts = [(file_sha256(path), probe(path)) for path in real]
        rng = np.random.default_rng(seed + 1)
        prints = rng.integers(0, 1 << 63, n_clips, dtype=np.int64) * rng.choice([-1, 1], n_clips)
        planted = rng.choice(n_clips, n_clips // 100, replace=False)
        for i in planted:  # a near-duplicate of the clip 25 further on (another workcell)
            flip = rng.choice(64, 2, replace=False)
            prints[i] = prints[(i + 25) % n_clips] ^ np.int64((1 << int(flip[0])) | (1 << int(flip[1]))
                                                              if max(flip) < 63 else 3)
        rows = []
        for i in range(n_clips):
            cell = f"cell-{i % 50:02d}"
            link = p.media_root / cell / f"take-{i:06d}.mp4"
            link.parent.mkdir(exist_ok=True)
            os.symlink(real[i % n_files], link)
            file_sha, info = facts[i % n_files]
            sha = hashlib.sha256(f"{file_sha}:{i}".encode()).hexdigest()
            fp = int(prints[i]) if with_fingerprints else None
            rows.append(dict(path=f"{cell}/take-{i:06d}.mp4", sha256=sha, fps=info.fps,
                             frame_count=info.frame_count, duration=info.duration,
                             width=info.width, height=info.height, group_key=cell,
                             consent=True, licence="invented", fingerprint=fp))
        times["clips"] = time.perf_counter() - t

        t = time.perf_counter()
        from sqlalchemy import insert
        p._write(lambda s: s.execute(insert(Clip), rows))
        times["clip_rows"] = time.perf_counter() - t

        t = time.perf_counter()
        _truth, records = plan(n_clips, n_people, n_captions, seed)
        with tempfile.NamedTemporaryFile("w", suffix=".jsonl", delete=False, encoding="utf-8") as f:
            for r in records:
                f.write(json.dumps(r) + "\n")
        times["plan"] = time.perf_counter() - t
        t = time.perf_counter()
        counts = p.import_records(f.name)
        os.unlink(f.name)
        times["import"] = time.perf_counter() - t
    return {"clips": n_clips, "annotators": n_people, "captions_per_annotator": n_captions,
            "real_files": n_files, "fingerprints": with_fingerprints, "imported": counts,
            "seconds": {k: round(v, 2) for k, v in times.items()},
            "database_mb": round((folder / "project.sqlite").stat().st_size / 1e6, 1)}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("folder", type=Path)
    ap.add_argument("--clips", type=int, default=10_000)
    ap.add_argument("--annotators", type=int, default=3)
    ap.add_argument("--captions", type=int, default=3)
    ap.add_argument("--files", type=int, default=8)
    ap.add_argument("--fingerprints", action="store_true", help="store the clips' fingerprints")
    ap.add_argument("--seed", type=int, default=0)
    a = ap.parse_args()
    print(json.dumps(build(a.folder, a.clips, a.annotators, a.captions, a.files, a.fingerprints,
                           a.seed), indent=2))


if __name__ == "__main__":
    main()
