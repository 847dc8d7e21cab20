"""Project settings, label set and caption guideline (stored as ``clipscribe-project.json``)."""

from __future__ import annotations

import re
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator

SETTINGS_FILE = "clipscribe-project.json"
SETTINGS_FORMAT = "clipscribe-project/1"

_HEX_COLOUR = re.compile(r"^#[0-9a-fA-F]{6}$")
#: one label written as text: its name, then optionally its key in brackets and its colour,
#: "stack [k] #6a4c93" (the Set up dialog and ``clipscribe labels`` read and write this form)
_LABEL_LINE = re.compile(r"^(?P<name>.+?)(?:\s*\[(?P<key>[^\]]?)\])?(?:\s*(?P<colour>#[0-9A-Fa-f]{6}))?\s*$")


def parse_label_line(line: str) -> dict:
    """``{"name", "key"?, "colour"?}`` of one label line; a key or colour left out is not in it
    (``[]`` means no key)."""
    m = _LABEL_LINE.match(line.strip())
    out: dict = {"name": m["name"].strip()}
    if m["key"] is not None:
        out["key"] = m["key"].lower() or None
    if m["colour"]:
        out["colour"] = m["colour"].lower()
    return out


def label_line(label) -> str:
    """The line form of a label (anything with name, key and colour)."""
    return f"{label.name}  [{label.key or ''}]  {label.colour}"


def label_specs(lines: list[str], known: list) -> list[dict]:
    """Label specs from label lines; a label already in ``known`` (LabelInfo) keeps its key,
    colour and guideline unless its line gives them."""
    by_name = {lab.name: lab for lab in known}
    out = []
    for line in lines:
        d = parse_label_line(line)
        k = by_name.get(d["name"])
        out.append({"key": k.key, "colour": k.colour, "guideline": k.guideline, **d} if k else d)
    return out


class LabelSpec(BaseModel):
    """One activity label of the project's label set."""

    model_config = ConfigDict(extra="forbid")
    name: str = Field(min_length=1, max_length=200)
    key: str | None = Field(default=None, max_length=1, description="single-key shortcut")
    colour: str | None = Field(default=None, description="#rrggbb")
    guideline: str = ""

    @field_validator("colour")
    @classmethod
    def _colour(cls, v: str | None) -> str | None:
        if v is not None and not _HEX_COLOUR.match(v):
            raise ValueError(f"colour {v!r} is not of the form #rrggbb")
        return v

    @field_validator("name")
    @classmethod
    def _name(cls, v: str) -> str:
        if v != v.strip():
            raise ValueError("label name has leading or trailing whitespace")
        return v


class CaptionGuideline(BaseModel):
    """Rules checked live while captions are written."""

    model_config = ConfigDict(extra="forbid")
    captions_per_clip: int = Field(default=5, ge=1, le=50)
    min_words: int = Field(default=4, ge=0)
    max_words: int = Field(default=40, ge=1)
    banned_openings: list[str] = Field(
        default_factory=lambda: ["there is", "there are", "this is", "a video of", "in this video"])


class ProjectSettings(BaseModel):
    """The settings file of a project folder."""

    model_config = ConfigDict(extra="forbid")
    format: Literal["clipscribe-project/1"] = SETTINGS_FORMAT
    name: str = Field(default="untitled", min_length=1)
    database_url: str | None = Field(
        default=None, description="None: SQLite file inside the folder; else a PostgreSQL URL")
    media_root: str = Field(default="media", description="relative to the project folder, or absolute")
    blind: bool = True
    segments_may_overlap: bool = False
    require_consent: bool = False
    caption_guideline: CaptionGuideline = Field(default_factory=CaptionGuideline)
