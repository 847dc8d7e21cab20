"""The export record and manifest models and their generated JSON Schema."""

from __future__ import annotations

import jsonschema
import pytest
from pydantic import ValidationError

from clipscribe.export import ExportRecord, export_schemas
from clipscribe.schema.export import ExportSegment


def test_schemas_are_valid_draft_2020_12():
    schemas = export_schemas()
    assert set(schemas) == {"ExportRecord", "ExportManifest"}
    for s in schemas.values():
        # Reference: the jsonschema package's meta-schema check for Draft 2020-12.
        jsonschema.Draft202012Validator.check_schema(s)


def test_record_model_and_schema_agree_on_a_good_record():
    rec = ExportRecord(clip="1", split="train", media="a.mp4", sha256="0" * 64, label="x",
                       label_source="gold", agreement=1.0, annotators=2,
                       segments=[ExportSegment(label="x", start=0, end=3, start_s=0, end_s=0.1)])
    jsonschema.validate(rec.model_dump(mode="json"), export_schemas()["ExportRecord"])


@pytest.mark.parametrize("bad", [{"sha256": "XYZ"}, {"agreement": 1.5}, {"label_source": "vote"},
                                 {"unknown": 1}])
def test_record_rejects_bad_fields_in_model_and_schema(bad):
    base = {"clip": "1", "split": "train", "media": "a.mp4", "annotators": 0}
    with pytest.raises(ValidationError):
        ExportRecord(**base, **bad)
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate({**base, **bad}, export_schemas()["ExportRecord"])


def test_segment_end_must_follow_start():
    with pytest.raises(ValidationError, match="greater than start"):
        ExportSegment(label="x", start=5, end=5, start_s=0, end_s=0)
