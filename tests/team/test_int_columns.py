"""Integer columns read through the driver's cursor equal what SQLAlchemy's own result gives,
on both backends: plain selects, a bound parameter, an expanding IN list and an empty result."""

from __future__ import annotations

import pytest
from sqlalchemy import select

from clipscribe.store.columns import int_columns
from clipscribe.store.models import Clip, ClipLabel

from .conftest import add_clips

@pytest.fixture
def project(either_backend):
    p, ann = either_backend
    add_clips(p, 4)
    for clip, label in ((1, "stack"), (2, "pick up"), (4, "stack")):
        p.set_clip_label(clip, ann, label)
    return p


@pytest.mark.parametrize("stmt,rows", [
    (select(ClipLabel.clip_id, ClipLabel.annotator_id, ClipLabel.label_id)
     .order_by(ClipLabel.id), 3),
    (select(Clip.id).where(Clip.id > 2).order_by(Clip.id), 2),
    (select(ClipLabel.clip_id, ClipLabel.label_id).where(ClipLabel.clip_id.in_([1, 4, 9]))
     .order_by(ClipLabel.clip_id), 2),
    (select(Clip.id).where(Clip.id > 99), 0),
], ids=["three-columns", "bound-parameter", "in-list", "empty"])
def test_driver_columns_equal_sqlalchemy_rows(project, stmt, rows):
    ctx = project._ctx
    got = ctx.read(lambda s: int_columns(s, stmt))
    want = ctx.read(lambda s: [tuple(r) for r in s.execute(stmt)])
    assert got.dtype.name == "int64"
    assert len(want) == rows
    assert got.shape == (rows, len(stmt.selected_columns))
    assert [tuple(r) for r in got.tolist()] == want


def test_plain_rows_equal_sqlalchemy_rows_with_text_and_null(project):
    """Captions: text (with quotes and non-ASCII), an integer, and a NULL segment id."""
    from clipscribe.store.columns import plain_rows
    from clipscribe.store.models import Caption
    ann = project.annotators()[0].name
    project.add_caption(1, ann, "the arm's \"grip\" — déjà vu")
    project.add_caption(3, ann, "a plain one")
    stmt = select(Caption.clip_id, Caption.text, Caption.segment_id).order_by(Caption.id)
    ctx = project._ctx
    got = ctx.read(lambda s: plain_rows(s, stmt))
    want = ctx.read(lambda s: [tuple(r) for r in s.execute(stmt)])
    assert got == want and len(want) == 2 and want[0][2] is None
    assert got[0][1] == "the arm's \"grip\" — déjà vu"
