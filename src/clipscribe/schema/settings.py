"""Project settings, label set and caption guideline (stored as ``clipscribe-project.json``)."""

from __future__ import annotations

import re
import unicodedata
from pathlib import PurePosixPath, PureWindowsPath
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

SETTINGS_FILE = "clipscribe-project.json"
SETTINGS_FORMAT = "clipscribe-project/1"

_HEX_COLOUR = re.compile(r"^#[0-9a-fA-F]{6}$")
#: top-level folders of a Unix system that never hold a project's videos
_SYSTEM_FOLDERS = frozenset({"proc", "sys", "dev", "run", "boot", "etc", "usr", "bin", "sbin",
                             "lib", "lib32", "lib64", "libx32"})
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
        check_name_text(v, "label name")
        return v


def check_name_text(v: str, what: str) -> None:
    """ValueError when a name holds a line break or another control character: names are
    shown on one line, in CSV cells and in file names."""
    bad = next((ch for ch in v if unicodedata.category(ch) in ("Cc", "Zl", "Zp")), None)
    if bad is not None:
        kind = "a line break" if bad in "\n\r\x0b\x0c\x85\u2028\u2029" else "a control character"
        raise ValueError(f"{what} {v!r} holds {kind} (U+{ord(bad):04X}); names are one line of text")


class CaptionGuideline(BaseModel):
    """Rules checked live while captions are written."""

    model_config = ConfigDict(extra="forbid")
    captions_per_clip: int = Field(default=5, ge=1, le=50)
    min_words: int = Field(default=4, ge=0)
    max_words: int = Field(default=40, ge=1)
    banned_openings: list[str] = Field(
        default_factory=lambda: ["there is", "there are", "this is", "a video of", "in this video"])
    at_submit: Literal["off", "warn", "block"] = Field(
        default="off", description="submitting a clip whose captions miss the guideline: off (not "
                                   "checked), warn (refused unless the annotator overrides, "
                                   "recorded) or block (refused); new projects made by "
                                   "`clipscribe new` or the start window use warn")

    @model_validator(mode="after")
    def _words_in_order(self) -> "CaptionGuideline":
        if self.min_words > self.max_words:
            raise ValueError(f"min_words ({self.min_words}) is greater than max_words "
                             f"({self.max_words}); no caption could pass")
        return self


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

    @field_validator("media_root")
    @classmethod
    def _media_root(cls, v: str) -> str:
        """A relative media root stays inside the project folder; an absolute one is shared
        storage and must be a folder of its own, never a file-system root or a system folder
        (a scan of it would walk the whole machine)."""
        if not v.strip():
            raise ValueError("media root is empty")
        posix, win = PurePosixPath(v.replace("\\", "/")), PureWindowsPath(v)
        if not (posix.is_absolute() or win.is_absolute() or win.drive):
            if ".." in posix.parts:
                raise ValueError(f"media root {v!r} leaves the project folder; keep it inside, or "
                                 "give the absolute path of a shared-storage folder")
            return v
        if posix.as_posix() in ("/", "//") or (win.drive and str(win) in (win.anchor, win.drive)):
            raise ValueError(f"media root {v!r} is the root of a file system; give the folder "
                             "on shared storage that holds the videos")
        top = posix.parts[1] if len(posix.parts) > 1 else ""
        if not win.drive and top in _SYSTEM_FOLDERS:
            raise ValueError(f"media root {v!r} lies in the system folder /{top}; give the folder "
                             "on shared storage that holds the videos")
        return v
