"""Segment rule: which temporal segments a clip is exported with, and where they came from.

``"gold"``: the lead's gold segments, else none. ``"gold+best"``: the gold segments, else the
segments of the agreeing annotator whose segments agree best with everyone else's, else none.
No Qt, no database.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass
from typing import Iterable, Literal, Sequence

from .inputs import ClipInput, SegmentInput

#: segment rules: which segments a clip is exported with
SEGMENT_POLICIES = ("gold+best", "gold")
SegmentRule = Literal["gold+best", "gold"]


@dataclass(frozen=True)
class SegmentChoice:
    """Segments exported for a clip; ``source`` is ``"gold"``, ``"annotator"`` or None (none
    exported); ``annotator`` names whose segments were taken (``"annotator"`` only)."""

    segments: tuple[SegmentInput, ...] = ()
    source: Literal["gold", "annotator"] | None = None
    annotator: str | None = None


#: what a clip without any segment (gold or annotator) is exported with under either rule
NO_SEGMENTS = SegmentChoice()


def describe_segment_rule(rule: str) -> str:
    """The segment rule in words, for the manifest."""
    if rule == "gold":
        return "the lead's gold segments; a clip without gold segments is exported without segments"
    return ("the lead's gold segments; else the segments of the agreeing annotator (own label "
            "equal to the exported label, every annotator when the clip has no label; skippers "
            "never) whose segments agree best with the other annotators' (largest sum of "
            "same-label frame overlap divided by frame union, per other annotator; ties by name); "
            "else no segments")


def _cover(segments: Iterable[SegmentInput]) -> dict[str, list[tuple[int, int]]]:
    """Per label, the frames covered as sorted, merged ``[start, end)`` ranges."""
    by: dict[str, list[tuple[int, int]]] = defaultdict(list)
    for s in segments:
        by[s.label].append((s.start, s.end))
    out = {}
    for label, ranges in by.items():
        merged: list[tuple[int, int]] = []
        for a, b in sorted(ranges):
            if merged and a <= merged[-1][1]:
                merged[-1] = (merged[-1][0], max(merged[-1][1], b))
            else:
                merged.append((a, b))
        out[label] = merged
    return out


def _length(ranges: Sequence[tuple[int, int]]) -> int:
    return sum(b - a for a, b in ranges)


def _shared(a: Sequence[tuple[int, int]], b: Sequence[tuple[int, int]]) -> int:
    """Frames in both merged range lists."""
    i = j = n = 0
    while i < len(a) and j < len(b):
        n += max(0, min(a[i][1], b[j][1]) - max(a[i][0], b[j][0]))
        if a[i][1] < b[j][1]:
            i += 1
        else:
            j += 1
    return n


def frame_overlap(a: Iterable[SegmentInput], b: Iterable[SegmentInput]) -> float:
    r"""Same-label frame overlap of two annotators' segments on one clip.

    .. math:: o(A, B) = \frac{\sum_y |F_A(y) \cap F_B(y)|}{\sum_y |F_A(y) \cup F_B(y)|}

    with :math:`F_A(y)` the frames annotator A covers with label :math:`y` (a Jaccard index
    over (frame, label) pairs). 0.0 when neither covers any frame.
    """
    ca, cb = _cover(a), _cover(b)
    inter = sum(_shared(ca[y], cb[y]) for y in ca.keys() & cb.keys())
    union = sum(_length(r) for r in ca.values()) + sum(_length(r) for r in cb.values()) - inter
    return inter / union if union else 0.0


def choose_segments(clip: ClipInput, agreeing: Iterable[str], rule: str) -> SegmentChoice:
    """The segments of ``clip`` under ``rule`` (see the module docstring). ``clip.segments`` are
    the gold segments; ``clip.annotator_segments`` every annotator's own; ``agreeing`` names
    the annotators who may lend theirs (:func:`clipscribe.export.policy.agreeing_annotators`)."""
    if clip.segments:
        return SegmentChoice(tuple(clip.segments), "gold")
    if rule == "gold":
        return SegmentChoice()
    skipped = {who for who, _ in clip.skipped}
    own = {who: segs for who, segs in clip.annotator_segments if segs and who not in skipped}
    candidates = sorted(set(agreeing) & own.keys())
    if not candidates:
        return SegmentChoice()

    def score(who: str) -> float:
        return sum(frame_overlap(own[who], segs) for other, segs in own.items() if other != who)
    best = min(candidates, key=lambda who: (-score(who), who))
    return SegmentChoice(tuple(own[best]), "annotator", best)
