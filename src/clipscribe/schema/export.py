"""Export records and the export manifest (pydantic). No I/O.

One :class:`ExportRecord` is one line of a split's JSON Lines file; :class:`ExportManifest` is
``manifest.json`` beside them. :func:`export_schemas` gives the JSON Schema of both, generated from
these classes so the files and their schema cannot drift apart.
"""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, model_validator

EXPORT_FORMAT = "clipscribe-export/1"

_SHA256 = r"^[0-9a-f]{64}$"


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class ExportSegment(_Model):
    """A temporal segment: frames (``end`` exclusive) and the same bounds in seconds."""

    label: str = Field(min_length=1)
    start: int = Field(ge=0, description="first frame (0-based)")
    end: int = Field(gt=0, description="frame after the last frame")
    start_s: float = Field(ge=0, description="start / fps")
    end_s: float = Field(ge=0, description="end / fps")

    @model_validator(mode="after")
    def _ordered(self) -> "ExportSegment":
        if self.end <= self.start:
            raise ValueError(f"segment end ({self.end}) must be greater than start ({self.start})")
        return self


class ExportCaption(_Model):
    """One reference caption; ``start``/``end`` (frames) tie it to a segment when given."""

    text: str = Field(min_length=1)
    source: Literal["gold", "accepted"]
    start: int | None = Field(default=None, ge=0)
    end: int | None = Field(default=None, gt=0)
    start_s: float | None = Field(default=None, ge=0)
    end_s: float | None = Field(default=None, ge=0)


class ExportRecord(_Model):
    """One exported clip: one line of ``<split>.jsonl``."""

    clip: str = Field(min_length=1, description="clip id")
    split: str = Field(min_length=1)
    media: str = Field(min_length=1,
                       description="media path: relative to the export folder when media were "
                                   "copied or linked, else relative to the project's media root")
    sha256: str | None = Field(default=None, pattern=_SHA256, description="of the media file")
    group: str | None = None
    label: str | None = Field(default=None, description="decided clip label")
    label_source: Literal["gold", "majority", "inferred"] | None = None
    label_posterior: float | None = Field(
        default=None, ge=0, le=1,
        description="inferred probability of the decided label (label rule `inferred` only)")
    agreement: float | None = Field(
        default=None, ge=0, le=1,
        description="share of annotator labels equal to the decided label")
    annotators: int = Field(ge=0, description="number of annotators who labelled the clip (a "
                                              "skip is not a label and is not counted here)")
    skipped: int = Field(default=0, ge=0, description="number of annotators who skipped the clip")
    fps: float | None = Field(default=None, gt=0)
    frame_count: int | None = Field(default=None, ge=0)
    segments: list[ExportSegment] = Field(default_factory=list)
    segment_source: Literal["gold", "annotator"] | None = Field(
        default=None, description="where `segments` came from: the lead's gold segments, one "
                                  "annotator's (the segment rule in the manifest), or none")
    captions: list[ExportCaption] = Field(default_factory=list)


class LabelPolicyModel(_Model):
    """How labels and captions were decided."""

    min_agreement: float = Field(ge=0, le=1)
    require_label: bool = True
    captions: Literal["gold", "gold+agreeing"] = Field(
        default="gold", description="gold: the gold references when present, else every accepted "
                                    "annotator caption; gold+agreeing: the gold references plus "
                                    "the captions of annotators whose label equals the exported one")
    segments: Literal["gold+best", "gold"] = Field(
        default="gold+best", description="gold: the gold segments, else none; gold+best: the gold "
                                         "segments, else those of the agreeing annotator who "
                                         "agrees best with the others, else none")
    labels: Literal["majority", "inferred"] = Field(
        default="majority", description="without gold: majority, the majority label "
                                        "(min_agreement); inferred, the inferred true label "
                                        "when its posterior is at least min_posterior")
    min_posterior: float | None = Field(default=None, ge=0, le=1,
                                        description="threshold of the inferred rule")
    inference: dict | None = Field(default=None,
                                   description="recipe of the truth inference (inferred rule)")
    rule: str = Field(description="the rule in words")


class FindingModel(_Model):
    """One leakage finding."""

    kind: str
    severity: Literal["blocking", "warning"]
    message: str
    clips: list[str]
    files: list[str] = Field(default_factory=list,
                             description="media paths of `clips` (same order), relative to the "
                                         "project's media root")
    details: dict = Field(default_factory=dict)


class QualityWarning(_Model):
    """A warning about the export that is not leakage (a split empty or far from its ratio,
    clips with fewer reference captions than the guideline asks for). Never blocks."""

    kind: Literal["split-empty", "split-off-ratio", "few-captions"]
    message: str
    clips: list[str] = Field(default_factory=list)
    files: list[str] = Field(default_factory=list, description="media paths of `clips`")
    details: dict = Field(default_factory=dict)


class LeakageReportModel(_Model):
    """All findings of one leakage check and the settings that produced them."""

    blocking: list[FindingModel]
    warnings: list[FindingModel]
    counts: dict[str, int] = Field(description="findings per kind")
    recipe: dict[str, str | int | float | bool]


class OverrideModel(_Model):
    """Who let an export with blocking findings through, and why."""

    by: str = Field(min_length=1)
    reason: str = Field(min_length=1)
    at: str = Field(description="UTC time, ISO 8601")
    findings: int = Field(ge=0, description="number of blocking findings overridden")


class FileEntry(_Model):
    """One file written by the export, relative to the export folder."""

    path: str
    sha256: str = Field(pattern=_SHA256)
    bytes: int = Field(ge=0)


class LeftOut(_Model):
    """A clip not exported, with the reason."""

    clip: str
    reason: str
    media: str | None = Field(default=None, description="media path relative to the media root")


class ExportManifest(_Model):
    """``manifest.json``: everything needed to trust and reproduce an export."""

    format: Literal["clipscribe-export/1"] = EXPORT_FORMAT
    tool_version: str
    project: str
    created_at: str = Field(description="UTC time, ISO 8601")
    label_policy: LabelPolicyModel
    seed: int
    ratios: dict[str, float] = Field(description="target split fractions, normalised to sum 1")
    counts: dict[str, dict[str, int]] = Field(description="clips per split x label")
    totals: dict[str, int] = Field(description="clips per split")
    left_out: list[LeftOut] = Field(default_factory=list)
    duplicates_dropped: int = Field(
        default=0, ge=0, description="reference captions left out as repeats of one already "
                                     "taken (see recipes.duplicates_dropped)")
    unlabelled_segments: int = Field(
        default=0, ge=0, description="annotator segments of the exported clips left out for "
                                     "having no label (see recipes.unlabelled_segments)")
    warnings: list[QualityWarning] = Field(
        default_factory=list, description="splits empty or far from their ratios, clips short of "
                                          "reference captions; see recipes.warnings")
    split_conflicts: list[str] = Field(
        default_factory=list, description="frozen assignments that put one group in two splits")
    media_mode: Literal["copy", "hardlink"] | None = None
    files: list[FileEntry]
    leakage: LeakageReportModel
    override: OverrideModel | None = None
    recipes: dict[str, str] = Field(description="how every number in this manifest was computed")
    assignment: dict[str, str] = Field(
        description="clip id -> split; pass back as `frozen` so later exports keep these clips "
                    "where they are")


def export_schemas() -> dict[str, dict]:
    """JSON Schema (draft 2020-12, as pydantic writes it) of the export record and manifest.

    Returns
    -------
    dict
        ``{"ExportRecord": {...}, "ExportManifest": {...}}``.
    """
    return {"ExportRecord": ExportRecord.model_json_schema(),
            "ExportManifest": ExportManifest.model_json_schema()}
