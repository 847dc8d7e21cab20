"""Build the sample project: 48 clips of the invented workbench scene in 8 workcells, three
simulated annotators whose work disagrees the way people's does, and a lead (the local user).

The first 12 clips (4 workcells) are the core scenario; 36 more in 4 later workcells give label
suggestions enough labelled clips to learn from (some labels differ only by the direction of
motion, "pick up" and "put down"; some show in a still frame, "stack"), and 4 of them are left
for the annotators to label.

- annotator-1 is careful: right labels, boundaries within a couple of frames, varied captions;
- annotator-2 systematically calls "stack" "put down" and paraphrases freely;
- annotator-3 is careless: a third of the labels are wrong, boundaries are loose, some captions
  are vague, and they skipped a few clips (so agreement has missing ratings); a random slip
  that would call a "stack" a "put down" is dropped, so that confusion stays annotator-2's.
"""

from __future__ import annotations

import datetime as dt
import os
import random
import time
from pathlib import Path

from ..project import Project
from . import scene

LABELS = [
    {"name": "pick up", "key": "p", "colour": "#e4572e",
     "guideline": "The gripper closes on a block resting on the bench and lifts it clear."},
    {"name": "put down", "key": "d", "colour": "#29a0b1",
     "guideline": "A held block is lowered onto the bench itself and released."},
    {"name": "push", "key": "s", "colour": "#f3a712",
     "guideline": "The gripper slides a block along the bench without lifting it."},
    {"name": "stack", "key": "k", "colour": "#6a4c93",
     "guideline": "A block is lifted and set down on top of another block."},
    {"name": "idle", "key": "i", "colour": "#7f8c8d",
     "guideline": "The arm only sways in its rest pose; nothing is moved."},
]

# (cell index, label, colour moved, other colour); three clips per workcell.
PLAN = [
    (0, "pick up", "red", "blue"), (0, "push", "yellow", "blue"), (0, "stack", "green", "red"),
    (1, "put down", "blue", "yellow"), (1, "idle", "red", "green"), (1, "stack", "yellow", "blue"),
    (2, "push", "green", "red"), (2, "pick up", "blue", "yellow"), (2, "put down", "red", "green"),
    (3, "stack", "red", "yellow"), (3, "pick up", "yellow", "green"), (3, "push", "blue", "red"),
]

# The later workcells (cell index 4-7): per cell, these labels in a rotated order, then one clip
# nobody has labelled yet (its label, for the picture, from LEFT_TO_LABEL).
MORE_LABELS = ["pick up", "put down", "stack", "push", "stack", "pick up", "put down", "stack", "idle"]
LEFT_TO_LABEL = ["push", "put down", "pick up", "stack"]
MORE_CELLS = (4, 5, 6, 7)

VERBS = {
    "pick up": ["lifts the {c} block off the bench", "picks up the {c} block", "raises the {c} cube from the table",
                "grabs the {c} block and lifts it"],
    "put down": ["sets the {c} block down on the bench", "lowers the {c} cube onto the table",
                 "places the {c} block on the bench", "puts the {c} block down"],
    "push": ["pushes the {c} block along the bench", "slides the {c} cube along the table",
             "nudges the {c} block across the table", "shoves the {c} block sideways"],
    "stack": ["stacks the {c} block on the {o} one", "puts the {c} cube on top of the {o} cube",
              "places the {c} block onto the {o} block", "builds a tower of the {c} and {o} blocks"],
    "idle": ["waits above the bench without moving anything", "hovers in its rest pose",
             "stays still while the {c} block sits on the bench", "does nothing with the blocks"],
}
SUBJECTS = ["the robot arm", "the grey arm", "a small robot arm", "the arm"]
VAGUE = ["a robot does something", "robot moving", "the arm moves a bit", "something happens on the table"]
N_FRAMES = 60


def build_sample(folder: str | os.PathLike, *, seed: int = 7, later_workcells: bool = False) -> dict:
    """Create the sample project in ``folder`` (must not hold a project). Deterministic by seed.

    By default the core scenario: the first 12 clips in 4 workcells. ``later_workcells=True``
    adds the 40 clips of the later workcells (what ``clipscribe sample`` and the start window
    build); the first 12 clips are the same either way."""
    t0 = time.perf_counter()
    root = Path(folder)
    rng = random.Random(seed)
    with Project.create(root, name="Workbench robot sample") as p:
        p.update_settings(caption_guideline={**p.settings.caption_guideline.model_dump(),
                                             "captions_per_clip": 3})
        p.define_labels(LABELS)
        lead = p.user
        people = ["annotator-1", "annotator-2", "annotator-3"]
        for name in people:
            p.add_annotator(name)
        actions = [_make_clip(p, rng, i, *row, seed=seed) for i, row in enumerate(PLAN)]
        pace = _Pace(seed, people)
        for clip, act in actions:
            _annotate(p, rng, clip, act, people, pace)
        # the later workcells draw from their own random stream, so the first 12 stay as they were
        more_rng = random.Random(seed + 104729)
        more = _more_plan(more_rng) if later_workcells else []
        made = [_make_clip(p, more_rng, len(PLAN) + i, *row, seed=seed) for i, row in enumerate(more)]
        for (clip, act), (cell_i, *_, labelled) in zip(made, more):
            if labelled:  # captions there name the bay, as people do once there are several
                place = f" at bay {scene.CELLS[cell_i].name.split('-')[1]}"
                _annotate(p, more_rng, clip, act, people, pace, place)
        p.user = lead
        # as a project looks after 'clipscribe compute': exports check near duplicates at once
        p.compute(["fingerprint"], workers=0)
    return {"folder": str(root), "clips": len(PLAN) + len(more), "annotators": people,
            "lead": lead, "seconds": round(time.perf_counter() - t0, 2)}


def _more_plan(rng: random.Random) -> list[tuple[int, str, str, str, bool]]:
    """(cell index, label, colour moved, other colour, labelled?) of the later workcells."""
    rows = []
    for k, cell_i in enumerate(MORE_CELLS):
        shift = 2 * k
        labels = MORE_LABELS[shift:] + MORE_LABELS[:shift]
        for label, labelled in [(lab, True) for lab in labels] + [(LEFT_TO_LABEL[k], False)]:
            colour, other = rng.sample(sorted(scene.COLOURS), 2)
            rows.append((cell_i, label, colour, other, labelled))
    return rows


def _make_clip(p: Project, rng: random.Random, i: int, cell_i: int, label: str, colour: str,
               other: str, *_: object, seed: int) -> tuple[int, scene.Action]:
    """Render, write and add clip number ``i`` (0-based) of the plan; its id and action."""
    cell = scene.CELLS[cell_i]
    start = rng.randint(8, 16)
    end = start + rng.randint(26, 34)
    x_from = float(rng.randint(110, 150))
    x_to = x_from + (60 if label == "push" else 0) if label != "stack" else float(rng.randint(190, 220))
    if label == "put down":
        x_to = float(rng.randint(170, 230))
    act = scene.Action(label, colour, start, end if label != "idle" else start, x_from, x_to, other)
    dst = p.media_root / cell.name / f"take-{i + 1:02d}.mp4"
    dst.parent.mkdir(parents=True, exist_ok=True)
    scene.write_clip(str(dst), scene.render(cell, act, N_FRAMES, seed * 1000 + i))
    clip = p.add_clip(dst, group=cell.name, source="rendered sample scene (invented)",
                      licence="CC0-1.0", consent=True)
    return clip, act


class _Pace:
    """Simulated working times: each annotator's edits 20-70 s apart over a working morning,
    with a longer pause when they move to another clip, so throughput and trends on the board
    look like people's. Its own random stream, so the sample's content does not depend on it."""

    def __init__(self, seed: int, people: list[str]) -> None:
        start = dt.datetime(2026, 11, 2, 9, 0, tzinfo=dt.timezone.utc)
        self.rng = random.Random(seed + 7919)
        self.clock = {who: (start + dt.timedelta(minutes=7 * k), None)
                      for k, who in enumerate(people)}

    def of(self, who: str, clip: int):
        """A clock for ``who`` working on ``clip`` (read once per write)."""
        def tick() -> dt.datetime:
            at, last_clip = self.clock[who]
            at += dt.timedelta(seconds=self.rng.uniform(20, 70)
                               + (self.rng.uniform(60, 240) if clip != last_clip else 0))
            self.clock[who] = (at, clip)
            return at
        return tick


def _annotate(p: Project, rng: random.Random, clip: int, act: scene.Action, people: list[str],
              pace: _Pace, place: str = "") -> None:
    for who in people:
        if who == "annotator-3" and rng.random() < 0.25:
            continue  # a careless annotator skipped this clip entirely
        with Project.simulated_clock(pace.of(who, clip)):
            _annotate_one(p, rng, clip, act, who, place)


def _annotate_one(p: Project, rng: random.Random, clip: int, act: scene.Action, who: str,
                  place: str = "") -> None:
    label = act.label
    if who == "annotator-2" and label == "stack":
        label = "put down"  # systematic confusion
    if who == "annotator-3" and rng.random() < 0.33:
        label = rng.choice([l["name"] for l in LABELS if l["name"] != label])
        if act.label == "stack" and label == "put down":
            label = act.label  # random slips, never the confusion of annotator-2
    p.set_clip_label(clip, who, label)
    if act.label != "idle":
        slack = {"annotator-1": 2, "annotator-2": 3, "annotator-3": 8}[who]
        start = max(0, act.start + rng.randint(-slack, slack))
        end = min(N_FRAMES, act.end + rng.randint(-slack, slack))
        seg = p.add_segment(clip, who, label, start, max(start + 1, end))
    else:
        seg = None
    verbs = VERBS[act.label] if who != "annotator-2" or act.label != "stack" else VERBS["put down"]
    picks = rng.sample(verbs, 3)
    written: set[str] = set()
    for k, phrase in enumerate(picks):
        if who == "annotator-3" and rng.random() < 0.4:
            text = rng.choice(VAGUE)
            # the same vague caption twice on one clip would be one record: the next one instead
            text = next(v for v in VAGUE[VAGUE.index(text):] + VAGUE if v not in written)
        else:
            text = f"{rng.choice(SUBJECTS)} {phrase.format(c=act.colour, o=act.other)}{place}"
            text = text[0].upper() + text[1:] + "."
        written.add(text)
        p.add_caption(clip, who, text, segment=seg if k == 0 else None)
    p.set_clip_state(clip, who, "submitted")
