"""pydantic models for interchange records and settings. No I/O."""

from .records import (
    RECORD_TYPES, CaptionRecord, ClipRecord, GoldRecord, LabelRecord, Record, SegmentRecord,
    parse_record, record_schemas,
)
from .settings import SETTINGS_FILE, CaptionGuideline, LabelSpec, ProjectSettings

__all__ = [
    "RECORD_TYPES", "CaptionRecord", "ClipRecord", "GoldRecord", "LabelRecord", "Record",
    "SegmentRecord", "parse_record", "record_schemas",
    "SETTINGS_FILE", "CaptionGuideline", "LabelSpec", "ProjectSettings",
]
