"""Every Qt model of the workbench under QAbstractItemModelTester."""

from PySide6.QtCore import QModelIndex
from PySide6.QtTest import QAbstractItemModelTester

from clipscribe import Project
from clipscribe.ui.workbench.queue_model import ClipIdRole, ClipQueueModel
from clipscribe.ui.workbench.segment_model import SegmentModel

Mode = QAbstractItemModelTester.FailureReportingMode


def test_queue_model_pages_filters_and_refreshes(qtbot, sample, monkeypatch):
    monkeypatch.setattr("clipscribe.ui.workbench.queue_model.PAGE", 5)  # force several pages
    with Project.open(sample, user="annotator-3") as p:
        model = ClipQueueModel(p)
        assert model.rowCount() == 5 and model.canFetchMore(QModelIndex())
        QAbstractItemModelTester(model, Mode.Fatal)  # (the tester itself fetches a page)
        while model.canFetchMore(QModelIndex()):
            model.fetchMore(QModelIndex())
        assert model.rowCount() == 12
        assert [model.index(r, 0).data(ClipIdRole) for r in range(12)] == list(range(1, 13))
        model.set_filters(state="unfinished")
        unfinished = [r.clip.id for r in p.queue_rows(state="unfinished")]
        assert model.total == len(unfinished) and 0 < len(unfinished) < 12
        assert model.row_of(unfinished[-1]) == len(unfinished) - 1
        p.set_clip_label(unfinished[0], "annotator-3", "idle")
        model.refresh_clip(unfinished[0])
        assert model.index(0, 2).data() == "idle"
        model.set_filters()
        assert model.row_of(12) == 11


def test_segment_model(qtbot, sample):
    with Project.open(sample, user="annotator-1") as p:
        model = SegmentModel()
        QAbstractItemModelTester(model, Mode.Fatal)
        rows = p.segments(annotator="annotator-1")
        model.set_segments(rows)
        assert model.rowCount() == len(rows) > 0
        g = model.segments()[0]
        assert model.at_frame(g.start) == g and model.by_id(g.id) == g
        model.set_segments([])
        assert model.rowCount() == 0


def test_queue_jump_reads_only_the_page_of_the_target(qtbot, sample, monkeypatch):
    monkeypatch.setattr("clipscribe.ui.workbench.queue_model.PAGE", 3)  # 12 clips: pages 0..3
    with Project.open(sample, user="annotator-3") as p:
        model = ClipQueueModel(p)
        QAbstractItemModelTester(model, Mode.Fatal)  # watches the inserts of the jump too
        read = model.pages_read
        assert model.row_of(11) == 10                # clip 11 is row 10, on page 3
        assert model.rowCount() == 12 and not model.canFetchMore(QModelIndex())
        assert model.pages_read == read + 1          # the pages skipped over are not read
        assert model.index(10, 0).data(ClipIdRole) == 11
        assert [model.index(r, 0).data(ClipIdRole) for r in range(12)] == list(range(1, 13))
        assert model.pages_read == 4                 # read when first looked at
        # a jump under a filter lands on the filtered row
        model.set_filters(state="unfinished")
        unfinished = [r.clip.id for r in p.queue_rows(state="unfinished")]
        assert model.row_of(unfinished[-1]) == len(unfinished) - 1
        assert model.row(len(unfinished) - 1).clip.id == unfinished[-1]
        assert p.queue_index(unfinished[-1], state="unfinished") == len(unfinished) - 1
        assert p.queue_count(group="cell-east") == len(p.queue_rows(group="cell-east")) > 0


def test_queue_panel_selects_a_far_clip(qtbot, sample, monkeypatch):
    from clipscribe.ui.workbench.queue import QueuePanel
    monkeypatch.setattr("clipscribe.ui.workbench.queue_model.PAGE", 2)
    with Project.open(sample, user="annotator-3") as p:
        model = ClipQueueModel(p)
        panel = QueuePanel(model, labels=[], groups=[], people=[])
        qtbot.addWidget(panel)
        panel.show()
        chosen = []
        panel.clipChosen.connect(chosen.append)
        assert panel.select_clip(12)
        assert panel.view.currentIndex().row() == 11 and chosen == []
        assert panel.neighbour(-1) == 11 and panel.neighbour(1) is None
