""""Which cues carry the labels" on the board, in report.html and in CSV: the same numbers as
``compare_streams`` / ``clipscribe suggest --compare --json``."""

from __future__ import annotations

import csv
import json

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.review_report import write_report
from clipscribe.review_report.cues import cues_data, cues_figures, labels_table, streams_table

from .test_project_suggestions import labelled  # noqa: F401 (fixture)


def test_report_and_csv_carry_the_comparisons_numbers(labelled, tmp_path, capsys):  # noqa: F811
    folder, _ = labelled
    assert main(["suggest", str(folder), "--compare", "--json", "--folds", "5"]) == 0
    cli = json.loads(capsys.readouterr().out)
    with Project.open(folder) as p:
        cues = cues_data(p, n_boot=200)
        files = write_report(p, tmp_path / "rep", n_boot=200, cues=cues)
    assert cues["accuracy"] == cli["accuracy"] and cues["macro_f1"] == cli["macro_f1"]
    assert cues["fusion_weight"] == cli["fusion_weight"]
    rows = list(csv.DictReader(open(files.csv["cues_streams"], encoding="utf-8")))
    assert [r["stream"] for r in rows] == ["single-frame", "appearance", "motion", "fused"]
    for r in rows:
        assert float(r["accuracy"]) == cues["accuracy"][r["stream"]]
        assert float(r["macro_f1_low"]) <= float(r["macro_f1"]) <= float(r["macro_f1_high"])
    per = list(csv.DictReader(open(files.csv["cues_per_label"], encoding="utf-8")))
    assert {r["label"] for r in per} == {"left", "right"}
    html = files.html.read_text(encoding="utf-8")
    assert "Which cues carry the labels" in html and f"{cues['accuracy']['motion']:.2f}" in html
    # the classes differ only by direction: motion carries them
    assert cues["accuracy"]["motion"] > cues["accuracy"]["appearance"]


def test_too_few_labels_is_said_everywhere(tmp_path):
    with Project.create(tmp_path / "p") as p:
        p.define_labels(["a", "b"])
        cues = cues_data(p)
        assert "not enough labels yet" in cues["not_measured"]
        assert streams_table(cues)[1] == [] and labels_table(cues)[1] == []
        assert set(cues_figures(cues)) == {"cue_accuracy", "cue_f1", "cue_labels", "cue_accepted"}
        files = write_report(p, tmp_path / "rep", n_boot=50, cues=cues)
        assert "not enough labels yet" in files.html.read_text(encoding="utf-8")


def _loaded_board(qtbot, p, n_boot: int, timeout: int):
    """An agreement board on ``p`` once its numbers and then its cues panel are in."""
    from clipscribe.ui.app import application
    from clipscribe.ui.review.board import AgreementBoard
    application()
    board = AgreementBoard(p, n_boot=n_boot)
    qtbot.addWidget(board)
    with qtbot.waitSignal(board.cuesLoaded, timeout=timeout):
        board.load_now()
    return board


def test_board_panel_fills_in_the_background(qtbot, labelled):  # noqa: F811
    folder, _ = labelled
    with Project.open(folder) as p:
        board = _loaded_board(qtbot, p, 100, 180_000)
        assert board.cues["clips"] == 16
        fig = board.figs["cue_accuracy"].fig
        assert fig.title.startswith("Which cues carry the labels")
        tips = "\n".join(board.figs["cue_accuracy"].all_tips())
        assert f"motion: accuracy {board.cues['accuracy']['motion']:.3f}" in tips
        board.runner.wait()


def test_report_command_adds_the_cues_when_asked(labelled, tmp_path):  # noqa: F811
    folder, _ = labelled
    assert main(["report", str(folder), str(tmp_path / "plain"), "--boot", "50"]) == 0
    assert not (tmp_path / "plain" / "cues_streams.csv").exists()
    assert main(["report", str(folder), str(tmp_path / "out"), "--boot", "50", "--cues"]) == 0
    assert (tmp_path / "out" / "cues_streams.csv").is_file()


def test_agreement_with_and_without_accepted_suggestions_is_in_the_section(labelled, tmp_path):  # noqa: F811
    folder, ids = labelled
    with Project.open(folder) as p:
        p.train_suggester()
        p.set_clip_label(ids["new"], "ann-1", "right")
        p.accept_suggestion(ids["new"], "ann-2")
        cues = cues_data(p, n_boot=100)
        acc = cues["accepted_suggestions"]
        assert acc == p.agreement_with_and_without_suggestions()
        fig = cues_figures(cues)["cue_accepted"]
        assert "1 accepted" in fig.title
        html = write_report(p, tmp_path / "rep", n_boot=100, cues=cues).html.read_text("utf-8")
        assert "Agreement with and without accepted suggestions" in html


def test_board_waits_for_features_of_a_big_project(qtbot, labelled, monkeypatch):  # noqa: F811
    """More labelled clips without features than the background limit: the board says what to
    run instead of computing them itself (here the limit is set below any count)."""
    from clipscribe.project import suggestions
    monkeypatch.setattr(suggestions, "BACKGROUND_FEATURES", -1)
    monkeypatch.setattr(Project, "compare_streams", lambda *a, **k: pytest.fail("computed"))
    folder, _ = labelled
    with Project.open(folder) as p:
        board = _loaded_board(qtbot, p, 20, 60_000)
        assert "clipscribe compute DIR --what features" in board.cues["not_measured"]
        assert "of 16 labelled clips" in board.cues["not_measured"]
        board.runner.wait()
