"""A negative value in a report bar chart is drawn from zero to the left, never as a rectangle
of negative width (which SVG forbids: a negative width is an error, and the bar vanishes)."""

from __future__ import annotations

import re

from clipscribe.review_report.figures import Rect, bar_chart
from clipscribe.review_report.svg import to_svg


def _bars(fig):
    return [it for it in fig.items if isinstance(it, Rect)]


def test_negative_values_run_left_of_zero_and_positive_ones_right():
    fig = bar_chart("agreement", [("a", 0.6, ""), ("b", -0.3, ""), ("c", 0.0, "")], fmt="{:.2f}")
    a, b, c = _bars(fig)
    assert all(r.w > 0 for r in (a, b, c))
    zero = a.x
    assert b.x + b.w == zero and b.x < zero          # the negative bar ends at zero
    assert abs(a.w / b.w - 2.0) < 1e-9               # lengths in proportion to |value|
    assert not re.search(r'width="-', to_svg(fig))


def test_all_positive_values_keep_their_layout():
    fig = bar_chart("bleu", [("a", 10.0, ""), ("b", 20.0, "")])
    a, b = _bars(fig)
    assert a.x == b.x and abs(b.w / a.w - 2.0) < 1e-9


def test_captions_by_one_annotator_only_do_not_break_the_report(tmp_path, make_video, capsys):
    from clipscribe.cli import main

    from ._fixtures import small_project
    with small_project(tmp_path / "proj", make_video, clips=2) as p:
        for c in p.clips():
            p.set_clip_label(c.id, "ann-a", "stack")
            p.set_clip_label(c.id, "ann-b", "pick up")
            p.add_caption(c.id, "ann-a", "the arm lifts the block")  # nobody else captions
    assert main(["report", str(tmp_path / "proj"), str(tmp_path / "r"), "--boot", "20",
                 "--user", "lead"]) == 0, capsys.readouterr().err
    assert main(["agreement", str(tmp_path / "proj"), "--user", "lead"]) == 0
    assert "unexpected" not in capsys.readouterr().err
