"""Projects with one kind of work only (labels, captions or segments): every part of the
agreement report stands alone. What cannot be measured says why in its place and the rest is
shown, through the API, the CLI (``agreement``, ``agreement --json``, ``report``), the board
and the review desk."""

from __future__ import annotations

import csv
import json

import pytest
from PySide6.QtCore import QSettings

from clipscribe import Project
from clipscribe.agreement.report import NO_CAPTIONS, NO_LABELS, NO_SEGMENTS
from clipscribe.cli import main
from clipscribe.review_report.html import read_numbers

KINDS = ("labels", "captions", "segments")
PEOPLE = ("ann-1", "ann-2", "ann-3")
LABELS = ["pick up", "put down", "push"]
WHY = {"labels": NO_LABELS, "segments": NO_SEGMENTS, "captions": NO_CAPTIONS}


def build(folder, kind: str, make_video):
    """Three clips, three annotators, and only ``kind`` of work on them (with a disagreement)."""
    with Project.create(folder, user="lead-a") as p:
        p.define_labels(LABELS)
        for name in PEOPLE:
            p.add_annotator(name)
        clips = [p.add_clip(make_video(p.media_root / f"c{i}.mp4", n=40, seed=i))
                 for i in range(3)]
        for i, clip in enumerate(clips):
            for j, who in enumerate(PEOPLE):
                if kind == "labels":
                    p.set_clip_label(clip, who, LABELS[(i + (j == 2)) % 3])
                elif kind == "captions":
                    p.add_caption(clip, who, f"the arm moves block {i} to the "
                                             f"{['left', 'right', 'back'][j]} side of the table")
                else:
                    p.add_segment(clip, who, LABELS[i % 3], 2 + 3 * j, 20 + j)
    return folder


@pytest.fixture(params=KINDS)
def kind_project(request, tmp_path, make_video):
    return request.param, build(tmp_path / request.param, request.param, make_video)


def _missing(kind):
    return {k: WHY[k] for k in KINDS if k != kind}


def test_api_measures_the_part_there_is_and_says_why_not_the_others(kind_project):
    kind, folder = kind_project
    with Project.open(folder, user="lead-a") as p:
        rep = p.agreement_report(n_boot=20)
    assert rep.not_measured == _missing(kind)
    for part in KINDS:
        assert (getattr(rep, part) is not None) == (part == kind), part
    col = {"labels": "label_disagreement", "segments": "segment_f1",
           "captions": "caption_bleu"}
    for row in rep.review_queue():
        for part, key in col.items():
            # a part not measured gives no number, never a made-up "perfect" one
            assert (getattr(row, key) == getattr(row, key)) == (part == kind), (part, row)
    assert rep.recipe.n_raters == 3


def _run(capsys, *args):
    rc = main([str(a) for a in args])
    out, err = capsys.readouterr()
    return rc, out, err


def test_cli_agreement_text_and_json(kind_project, capsys):
    kind, folder = kind_project
    rc, out, err = _run(capsys, "agreement", folder, "--user", "lead-a", "--boot", 20)
    assert rc == 0, err
    for part, why in _missing(kind).items():
        assert f"{part.capitalize()}\n  not measured: {why}" in out
    shown = {"labels": "Krippendorff alpha", "segments": "frame-level alpha",
             "captions": "leave-one-out BLEU-1..4"}
    assert shown[kind] in out
    assert all(shown[k] not in out for k in KINDS if k != kind)
    rc, out, err = _run(capsys, "agreement", folder, "--user", "lead-a", "--boot", 20, "--json")
    assert rc == 0, err
    data = json.loads(out)
    assert data["not_measured"] == _missing(kind)
    assert data[kind] is not None and all(data[k] is None for k in _missing(kind))


def test_cli_report_writes_every_section_with_the_reason_in_place(kind_project, capsys, tmp_path):
    kind, folder = kind_project
    out_dir = tmp_path / "out"
    rc, _, err = _run(capsys, "report", folder, out_dir, "--user", "lead-a", "--boot", 20)
    assert rc == 0, err
    html = (out_dir / "report.html").read_text(encoding="utf-8")
    for part, why in _missing(kind).items():
        heading = html.index(f"<h2>{part.capitalize()}</h2>")
        following = html[heading:html.index("<h2>", heading + 4)]
        assert f'<p class="why">Not measured: {why}.</p>' in following, part
    assert read_numbers(html)["agreement"]["not_measured"] == _missing(kind)
    with open(out_dir / "summary.csv", newline="", encoding="utf-8") as f:
        rows = list(csv.DictReader(f))
    notes = {r["part"]: r["note"] for r in rows if r["metric"] == "not measured"}
    assert notes == _missing(kind)
    assert any(r["part"] == kind and r["value"] for r in rows)  # the measured part's numbers


@pytest.fixture
def lead_window(qtbot, tmp_path):
    from clipscribe.ui.app import application, open_window
    made = []

    def make(folder, view):
        application()
        p = Project.open(folder, user="lead-a")
        w = open_window(p, view=view, settings=QSettings(str(tmp_path / "w.ini"),
                                                        QSettings.Format.IniFormat))
        qtbot.addWidget(w)
        w.show()
        made.append((w, p))
        return w

    yield make
    for w, p in made:
        if w.isVisible():
            w.close()
        p.close()


def test_board_shows_what_there_is_and_why_the_rest_is_missing(qtbot, kind_project, lead_window):
    kind, folder = kind_project
    w = lead_window(folder, "board")
    board = w.review_desk.board
    qtbot.waitUntil(lambda: board.data is not None, timeout=30000)
    text = board.summary.text()
    assert "Could not compute" not in text
    for part, why in _missing(kind).items():
        assert f"{part} not measured: {why}" in text
    notes = {name: " ".join(t.text for t in v.fig.items if type(t).__name__ == "Text")
             for name, v in board.figs.items()}
    label_figs = ("label_alpha", "pairwise", "confusion")
    caption_figs = ("caption_bleu", "caption_cider")
    for name in label_figs:
        assert ("Not measured:" in notes[name]) == (kind != "labels"), name
    for name in caption_figs:
        assert ("Not measured:" in notes[name]) == (kind != "captions"), name
    assert board.pair.isEnabled() == (kind == "labels")


def test_review_desk_lists_the_clips_and_says_what_is_not_measured(qtbot, kind_project,
                                                                   lead_window):
    kind, folder = kind_project
    w = lead_window(folder, "review")
    desk = w.review_desk.desk
    qtbot.waitUntil(lambda: desk.ranking is None and desk.report is not None, timeout=30000)
    assert desk.queue_model.rowCount() == 3
    note = desk.queue_note.text()
    for part, why in _missing(kind).items():
        assert f"{part.capitalize()} not measured: {why}." in note
    qtbot.waitUntil(lambda: desk.cmp is not None, timeout=10000)
    title = desk.title.text()
    names = {"labels": "label disagreement", "segments": "segment F1",
             "captions": "caption BLEU"}
    for part, name in names.items():
        assert (f"{name}: not measured" in title) == (part != kind), title
