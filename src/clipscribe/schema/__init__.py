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


def all_schemas() -> dict[str, dict]:
    """JSON Schema of every record type and of the export formats."""
    out = {f"record-{k}": v for k, v in record_schemas().items()}
    from .export import export_schemas
    out.update({f"export-{k}": v for k, v in export_schemas().items()})
    return out
