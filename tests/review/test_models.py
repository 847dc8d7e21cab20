"""Every Qt model of the review desk under QAbstractItemModelTester (Fatal mode)."""

from PySide6.QtCore import Qt
from PySide6.QtTest import QAbstractItemModelTester

from clipscribe import Project
from clipscribe.ui.review.caption_model import CaptionGridModel
from clipscribe.ui.review.gold_segments import GoldSegmentModel
from clipscribe.ui.review.queue_model import ClipIdRole, DisputedClipsModel

Mode = QAbstractItemModelTester.FailureReportingMode


def test_disputed_clips_model(qtbot, sample):
    folder, lead = sample
    with Project.open(folder, user=lead) as p:
        model = DisputedClipsModel()
        QAbstractItemModelTester(model, Mode.Fatal)
        rows = p.review_queue()
        model.set_rows(rows)
        assert model.rowCount() == 12
        assert [model.index(r, 0).data(ClipIdRole) for r in range(12)] == [r.clip for r in rows]
        assert model.row_of(rows[3].clip) == 3
        model.set_rows(p.review_queue(group="cell-north"))
        assert model.rowCount() == 3


def test_caption_grid_model_accepts_rejects_and_edits(qtbot, sample):
    folder, lead = sample
    with Project.open(folder, user=lead) as p:
        clip = p.most_disputed_clip()
        written = []

        def writer(items):
            p.set_gold_captions(clip, items, lead=lead)
            written.append(items)
            return True

        model = CaptionGridModel(writer)
        QAbstractItemModelTester(model, Mode.Fatal)
        model.load(p.clip_comparison(clip))
        n = len(model.names)
        assert model.columnCount() == n + 1 and model.rowCount() >= 3
        cap = model.caption_at(1, 0)
        assert model.setData(model.index(1, 0), True, Qt.ItemDataRole.CheckStateRole)
        assert model.index(1, 0).data(Qt.ItemDataRole.CheckStateRole) == Qt.CheckState.Checked
        # a gold caption written by the lead, then removed by blanking it
        assert model.setData(model.index(1, n), "A block goes onto another block.")
        assert p.gold_captions(clip)[clip] == [cap.text, "A block goes onto another block."]
        assert model.setData(model.index(1, n), "")
        assert model.toggle(model.index(1, 0))  # reject
        assert p.gold_captions(clip) == {}
        assert not model.setData(model.index(0, n), "")  # nothing to remove
        assert len(written) == 4


def test_gold_segment_model(qtbot, sample):
    folder, lead = sample
    with Project.open(folder, user=lead) as p:
        clip = p.most_disputed_clip()

        def writer(segs):
            p.set_gold_segments(clip, segs, lead=lead)
            return True

        model = GoldSegmentModel(writer)
        QAbstractItemModelTester(model, Mode.Fatal)
        model.load([], [l.name for l in p.labels()])
        assert model.add(("stack", 5, 20)) and model.add(("push", 0, 4))
        assert [model.index(r, 1).data() for r in range(2)] == [0, 5]  # start order
        assert model.index(1, 2).data() == 19                         # last frame, as on the tracks
        assert model.setData(model.index(1, 2), 29)                    # last frame 29: end 30
        assert p.gold_segments(clip) == [(clip, "push", 0, 4), (clip, "stack", 5, 30)]
        assert not model.setData(model.index(1, 1), "x")
        assert model.remove(0) and model.rowCount() == 1
