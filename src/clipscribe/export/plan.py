"""An export plan: labels decided, splits assigned, leakage checked. Nothing written yet."""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field, replace
from typing import Callable, Iterable, Mapping

import numpy as np

from ..errors import ClipscribeError
from .checks import PlanWarning, few_references, split_balance
from .clusters import Clusters
from .caption_groups import caption_groups
from .inputs import ClipInput
from .leakage import LeakageReport, check_leakage
from .neardup import near_clusters
from .policy import (
    CaptionChoice, LabelDecision, LabelPolicy, agreeing_annotators, apply_policy, choose_captions,
)
from .segment_choice import NO_SEGMENTS, SegmentChoice, choose_segments
from .splits import SplitResult, normalise_ratios, split_clips
from .textdup import caption_clusters


class ExportError(ClipscribeError, RuntimeError):
    """An export that cannot be written (target not empty, media missing, …)."""


class ExportBlocked(ExportError):
    """The leakage check found blocking findings and no override was given."""

    def __init__(self, report: LeakageReport):
        self.report = report
        kinds = ", ".join(f"{k} ({n})" for k, n in report.counts().items()
                          if any(f.kind == k for f in report.blocking))
        super().__init__(f"export blocked by {len(report.blocking)} leakage findings: {kinds}; "
                         f"fix them or pass an override naming who accepts them and why")


class ExportCancelled(ExportError):
    """The cancel event was set; nothing was left behind."""


@dataclass(frozen=True)
class Override:
    """Lets an export with blocking findings through; recorded in the manifest."""

    by: str
    reason: str

    def __post_init__(self) -> None:
        if not self.by.strip() or not self.reason.strip():
            raise ValueError("an override needs who (by) and why (reason)")


@dataclass(frozen=True)
class ExportPlan:
    """What :func:`clipscribe.export.write_export` writes.

    ``clips`` are the exported clips (left-out ones are in ``left_out``); ``frozen`` is the
    assignment passed in, carried forward in the manifest together with the new one;
    ``captions`` the reference captions chosen per exported clip; ``segments`` the segments
    chosen per exported clip by the policy's segment rule; ``warnings`` the quality warnings
    (:mod:`clipscribe.export.checks`) that do not stop the export.
    """

    project: str
    clips: tuple[ClipInput, ...]
    decisions: dict[str, LabelDecision]
    left_out: tuple[LabelDecision, ...]
    split: SplitResult
    leakage: LeakageReport
    policy: LabelPolicy
    frozen: dict[str, str] = field(default_factory=dict)
    captions: dict[str, CaptionChoice] = field(default_factory=dict)
    warnings: tuple[PlanWarning, ...] = ()
    left_out_media: dict[str, str] = field(default_factory=dict)
    segments: dict[str, SegmentChoice] = field(default_factory=dict)

    def segments_of(self, clip: ClipInput) -> SegmentChoice:
        """The segments ``clip`` is exported with (chosen now when the plan has none)."""
        got = self.segments.get(clip.clip_id)
        if got is not None:
            return got
        label = self.decisions[clip.clip_id].label if clip.clip_id in self.decisions else None
        return choose_segments(clip, agreeing_annotators(clip, label), self.policy.segments)

    @property
    def duplicates_dropped(self) -> int:
        """Reference captions left out of the export as repeats of one already taken."""
        return sum(c.dropped for c in self.captions.values())

    @property
    def unlabelled_segments(self) -> int:
        """Annotator segments of the exported clips left out for having no label."""
        return sum(c.unlabelled_segments for c in self.clips)

    @property
    def assignment(self) -> dict[str, str]:
        return self.split.assignment

    @property
    def seed(self) -> int:
        return self.split.seed


def _validate(clips: list[ClipInput]) -> None:
    seen: set[str] = set()
    for c in clips:
        if c.clip_id in seen:
            raise ValueError(f"clip {c.clip_id!r} is given twice")
        seen.add(c.clip_id)
        own = [g for _, segs in c.annotator_segments for g in segs]
        if (c.segments or own or any(cap.segment for cap in c.captions)) and not c.fps:
            raise ValueError(f"clip {c.clip_id!r} has segments but no fps; frames cannot be "
                             f"turned into seconds")
        if c.fps is not None and c.fps <= 0:
            raise ValueError(f"clip {c.clip_id!r}: fps must be positive, got {c.fps!r}")
        for s in (*c.segments, *own):
            if not 0 <= s.start < s.end:
                raise ValueError(f"clip {c.clip_id!r}: segment {s.label!r} needs "
                                 f"0 <= start < end, got {s.start}..{s.end}")


def build_plan(clips: Iterable[ClipInput], ratios: Mapping[str, float], *,
               project: str = "untitled", policy: LabelPolicy | None = None, seed: int = 0,
               frozen: Mapping[str, str] | None = None, require_consent: bool = False,
               require_licence: bool = False, hamming_radius: int = 8,
               caption_threshold: float = 0.9, captions_wanted: int | None = None,
               cluster_captions: Callable[[list[str], float], Clusters] = caption_clusters,
               cluster_media: Callable[[np.ndarray, int], Clusters] = near_clusters
               ) -> ExportPlan:
    """Decide labels, assign splits to the clips that are kept, and check for leakage.

    The label policy runs first (:func:`clipscribe.export.policy.decide_label`); splits are
    stratified on the decided label (:func:`clipscribe.export.splits.split_clips`); the leakage
    check (:func:`clipscribe.export.leakage.check_leakage`) sees the exported captions.

    Parameters
    ----------
    clips : iterable of ClipInput
        Clip ids must be unique; a clip with segments needs ``fps``.
    ratios : mapping of split name to fraction
    project : str
        Written into the manifest.
    policy : LabelPolicy, optional
        Defaults to ``LabelPolicy()`` (min agreement 0.6, a label required).
    seed : int
    frozen : mapping of clip id to split, optional
        Usually the ``assignment`` of an earlier manifest. Frozen clips that the policy leaves
        out this time still hold their group's place.
    require_consent, require_licence, hamming_radius, caption_threshold, cluster_captions,
    cluster_media
        Passed to :func:`clipscribe.export.leakage.check_leakage`.
    captions_wanted : int, optional
        Reference captions per clip the guideline asks for; fewer is a ``few-captions``
        warning (:func:`clipscribe.export.checks.few_references`). Splits empty or far from
        their ratios are warnings too (:func:`clipscribe.export.checks.split_balance`).

    Returns
    -------
    ExportPlan
    """
    clips = list(clips)
    _validate(clips)
    normalise_ratios(ratios)  # refused now, not after the caption check started beside it
    policy = policy or LabelPolicy()
    decisions = apply_policy(clips, policy)
    kept = [c for c, d in zip(clips, decisions) if d.included]
    by_id = {d.clip_id: d for d in decisions if d.included}
    frozen = {str(k): str(v) for k, v in (frozen or {}).items()}
    # Frozen clips left out this time still anchor their group, so a new clip of that group
    # lands where the group already is; they are dropped from the assignment afterwards.
    anchors = [(c.clip_id, c.group, None) for c, d in zip(clips, decisions)
               if not d.included and c.clip_id in frozen and c.group is not None]
    chosen = {c.clip_id: choose_captions(c, by_id[c.clip_id].label, policy) for c in kept}
    texts = {k: tuple(t for t, _ in v.captions) for k, v in chosen.items()}
    # the captions' groups need no splits: found in a worker thread meanwhile (mostly numpy,
    # which lets the splits and the media checks run beside it)
    with ThreadPoolExecutor(1, thread_name_prefix="caption-groups") as pool:
        groups = pool.submit(caption_groups, kept, caption_threshold, texts, cluster_captions)
        split = split_clips([(c.clip_id, c.group, by_id[c.clip_id].label) for c in kept]
                            + anchors, ratios, seed=seed, frozen=frozen)
        if anchors:
            split = replace(split, assignment={k: v for k, v in split.assignment.items()
                                               if k in by_id})
        segments = {c.clip_id: choose_segments(c, agreeing_annotators(c, by_id[c.clip_id].label),
                                               policy.segments)
                    if c.segments or c.annotator_segments else NO_SEGMENTS for c in kept}
        report = check_leakage(kept, split.assignment, require_consent=require_consent,
                               require_licence=require_licence, hamming_radius=hamming_radius,
                               caption_threshold=caption_threshold, captions=texts,
                               cluster_captions=cluster_captions, caption_groups_of=groups.result,
                               cluster_media=cluster_media)
    files = {c.clip_id: c.media_path for c in kept}
    warnings = (split_balance(split.assignment, split.ratios, {c.clip_id: c.group for c in kept})
                + few_references({k: len(v.captions) for k, v in chosen.items()}, captions_wanted,
                                 files, policy.captions))
    return ExportPlan(project, tuple(kept), by_id,
                      tuple(d for d in decisions if not d.included), split, report, policy,
                      frozen, chosen, tuple(warnings),
                      {c.clip_id: c.media_path for c, d in zip(clips, decisions) if not d.included},
                      segments)
