"""Interchange records: one JSON object per line (JSON Lines).

These pydantic models are the single definition of what a record may hold. They do no I/O;
``clipscribe.project`` reads files and feeds lines to :func:`parse_record`. The JSON Schema in
``docs/schema/`` is generated from these classes (``clipscribe schema``).
"""

from __future__ import annotations

from typing import Annotated, Literal, Union

from pydantic import BaseModel, ConfigDict, Field, TypeAdapter, field_validator, model_validator

ClipRef = Annotated[
    str,
    Field(min_length=1, max_length=4096,
          description="Clip id (as a string) or the media path relative to the media root."),
]
Name = Annotated[str, Field(min_length=1, max_length=200)]
#: the longest caption clipscribe keeps, in characters; the same limit at every door (API,
#: window, import), so whatever is stored can be dumped and imported again
MAX_CAPTION_CHARS = 5000
CaptionText = Annotated[str, Field(min_length=1, max_length=MAX_CAPTION_CHARS)]
#: a frame number: a JSON integer (text such as "3" is refused), at most 2**31 - 1
MAX_FRAME = 2**31 - 1
Frame = Annotated[int, Field(strict=True, ge=0, le=MAX_FRAME)]


class _Record(BaseModel):
    model_config = ConfigDict(extra="forbid", str_strip_whitespace=False, frozen=True)

    @field_validator("clip", mode="before", check_fields=False)
    @classmethod
    def _clip_as_text(cls, v: object) -> object:
        # ids are accepted as JSON numbers too; they are compared as text.
        if isinstance(v, bool):
            raise ValueError("a clip reference must be an id or a relative path, not a boolean")
        return str(v) if isinstance(v, int) else v


def _refuse_blank(cls, v: str) -> str:
    """Text fields: all white space is as good as empty ("caption text is blank")."""
    if not v.strip():
        raise ValueError(f"{cls.model_fields['type'].default} text is blank")
    return v


class ClipRecord(_Record):
    """A media file to register (path relative to the media root)."""

    type: Literal["clip"] = "clip"
    clip: ClipRef
    group: str | None = Field(default=None, max_length=500)
    source: str | None = Field(default=None, max_length=2000)
    licence: str | None = Field(default=None, max_length=500)
    consent: bool | None = None


class LabelRecord(_Record):
    """One annotator's clip-level activity label."""

    type: Literal["label"] = "label"
    clip: ClipRef
    annotator: Name
    label: Name


class SegmentRecord(_Record):
    """A temporal segment in frames; ``end`` is exclusive. Without ``label`` (or with null) the
    segment is unlabelled: marked before its annotator chose a label."""

    type: Literal["segment"] = "segment"
    clip: ClipRef
    annotator: Name
    label: Name | None = Field(default=None, description="the segment's label; absent or null: "
                               "unlabelled (marked before its annotator chose one)")
    start: int = Field(strict=True, ge=0, le=MAX_FRAME, description="first frame of the segment (0-based)")
    end: int = Field(strict=True, gt=0, le=MAX_FRAME, description="frame after the last frame of the segment")

    @model_validator(mode="after")
    def _ordered(self) -> "SegmentRecord":
        if self.end <= self.start:
            raise ValueError(f"end ({self.end}) must be greater than start ({self.start})")
        return self


class CaptionRecord(_Record):
    """One reference caption. ``segment`` optionally ties it to a segment by [start, end)."""

    type: Literal["caption"] = "caption"
    clip: ClipRef
    annotator: Name
    text: CaptionText
    segment: tuple[Frame, Frame] | None = None

    _not_blank = field_validator("text")(classmethod(_refuse_blank))


class GoldRecord(_Record):
    """A lead's settled answer for a clip: label and/or reference captions."""

    type: Literal["gold"] = "gold"
    clip: ClipRef
    annotator: Name = Field(description="the lead who settled it")
    label: Name | None = None
    captions: list[CaptionText] | None = None


class CommentRecord(_Record):
    """A lead's comment on a clip, addressed to one annotator (``to``) or to no one."""

    type: Literal["comment"] = "comment"
    clip: ClipRef
    annotator: Name = Field(description="the lead who wrote it")
    to: Name | None = Field(default=None, description="the annotator it is addressed to")
    text: str = Field(min_length=1, max_length=5000)

    _not_blank = field_validator("text")(classmethod(_refuse_blank))


class StateRecord(_Record):
    """One annotator's state of their work on a clip: submitted, skipped (with the reason),
    unsure (flagged for the lead, optionally with a note) or open."""

    type: Literal["state"] = "state"
    clip: ClipRef
    annotator: Name
    state: Literal["open", "submitted", "skipped", "unsure"]
    reason: str | None = Field(default=None, max_length=5000,
                               description="why the clip was skipped (required then) or flagged")

    @model_validator(mode="after")
    def _skip_has_reason(self) -> "StateRecord":
        if self.state == "skipped" and not (self.reason and self.reason.strip()):
            raise ValueError("skipping a clip needs a reason")
        return self


class CheckRecord(_Record):
    """A check clip: a clip whose answer a lead knows in advance (only in a lead's dump)."""

    type: Literal["check"] = "check"
    clip: ClipRef
    annotator: Name = Field(description="the lead who marked it")
    label: Name = Field(description="the known answer")


Record = Annotated[
    Union[ClipRecord, LabelRecord, SegmentRecord, CaptionRecord, GoldRecord, CommentRecord,
          StateRecord, CheckRecord],
    Field(discriminator="type"),
]
RECORD_TYPES: dict[str, type[_Record]] = {
    "clip": ClipRecord, "label": LabelRecord, "segment": SegmentRecord,
    "caption": CaptionRecord, "gold": GoldRecord, "comment": CommentRecord, "state": StateRecord,
    "check": CheckRecord,
}
_adapter: TypeAdapter[Record] = TypeAdapter(Record)


def parse_record(obj: object) -> Record:
    """Validate one decoded JSON object; raises pydantic.ValidationError."""
    return _adapter.validate_python(obj)


def record_schemas() -> dict[str, dict]:
    """JSON Schema of each record type, keyed by type name."""
    return {name: cls.model_json_schema() for name, cls in RECORD_TYPES.items()}
