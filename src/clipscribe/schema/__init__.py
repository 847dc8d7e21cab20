"""pydantic models for interchange records and settings. No I/O.

The record models load on first use (opening a project needs only the settings)."""

from typing import TYPE_CHECKING, Any

from .settings import SETTINGS_FILE, CaptionGuideline, LabelSpec, ProjectSettings

if TYPE_CHECKING:
    from .records import (
        RECORD_TYPES, CaptionRecord, ClipRecord, GoldRecord, LabelRecord, Record, SegmentRecord,
        parse_record, record_schemas,
    )

_FROM_RECORDS = ("RECORD_TYPES", "CaptionRecord", "ClipRecord", "GoldRecord", "LabelRecord",
                 "Record", "SegmentRecord", "parse_record", "record_schemas")


def __getattr__(name: str) -> Any:
    if name in _FROM_RECORDS:
        from . import records
        return getattr(records, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

__all__ = [
    "RECORD_TYPES", "CaptionRecord", "ClipRecord", "GoldRecord", "LabelRecord", "Record",
    "SegmentRecord", "parse_record", "record_schemas",
    "SETTINGS_FILE", "CaptionGuideline", "LabelSpec", "ProjectSettings",
]


def all_schemas() -> dict[str, dict]:
    """JSON Schema of every record type and of the export formats."""
    from .records import record_schemas
    out = {f"record-{k}": v for k, v in record_schemas().items()}
    from .export import export_schemas
    out.update({f"export-{k}": v for k, v in export_schemas().items()})
    return out
