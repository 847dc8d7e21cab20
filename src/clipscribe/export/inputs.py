"""Plain input objects the project façade fills in for an export. No Qt, no database."""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True, slots=True)
class SegmentInput:
    """A settled temporal segment in frames; ``end`` is exclusive."""

    label: str
    start: int
    end: int


@dataclass(frozen=True, slots=True)
class CaptionInput:
    """One annotator caption. ``accepted`` is the caller's verdict (guideline met, not rejected)."""

    text: str
    annotator: str | None = None
    accepted: bool = True
    segment: tuple[int, int] | None = None


@dataclass(frozen=True, slots=True)
class ClipInput:
    """Everything the export needs to know about one clip.

    ``labels`` holds one label per annotator who labelled the clip (``annotator_labels`` the
    same as ``(annotator, label)`` pairs, when known: the caption policy needs them to tell
    agreeing annotators); ``skipped`` lists ``(annotator, reason)`` of those who skipped the
    clip (they gave no label; a skip is never counted as one); ``gold_label`` and
    ``gold_captions`` are the lead's settled answers (None when not settled); ``segments`` are
    the lead's gold segments and ``annotator_segments`` each annotator's own, as
    ``(annotator, segments)`` pairs (the segment rule of the export chooses between them, see
    :mod:`clipscribe.export.segment_choice`); ``unlabelled_segments`` counts the annotator
    segments that had no label (marked before their annotator chose one): they are not in
    ``annotator_segments``, are never exported, and are counted in the manifest. ``fingerprint`` is
    the clip's 64-bit perceptual hash as a plain int; ``sha256`` the hex digest of the media file.
    ``source_path`` is where the writer reads the media from when it copies or links them.
    ``posterior`` is the inferred probability of each true label, ``(label, probability)``
    pairs (the caller's truth inference over every clip's annotator labels; empty when not
    inferred); the ``"inferred"`` label rule decides by it.
    """

    clip_id: str
    media_path: str
    group: str | None = None
    sha256: str | None = None
    fingerprint: int | None = None
    fps: float | None = None
    frame_count: int | None = None
    labels: tuple[str, ...] = ()
    annotator_labels: tuple[tuple[str, str], ...] = ()
    skipped: tuple[tuple[str, str], ...] = ()
    gold_label: str | None = None
    captions: tuple[CaptionInput, ...] = ()
    gold_captions: tuple[str, ...] | None = None
    segments: tuple[SegmentInput, ...] = ()
    annotator_segments: tuple[tuple[str, tuple[SegmentInput, ...]], ...] = ()
    unlabelled_segments: int = 0
    consent: bool | None = None
    licence: str | None = None
    source_path: str | None = None
    posterior: tuple[tuple[str, float], ...] = ()
    extra: dict = field(default_factory=dict, compare=False)

    @property
    def duration_s(self) -> float | None:
        """frame_count / fps, or None when either is unknown."""
        if self.fps and self.frame_count is not None:
            return self.frame_count / self.fps
        return None
