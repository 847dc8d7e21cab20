"""The x labels of the trend chart never run into each other: a 100k-clip project's windows
are "#1 (16667 clips)" and more, wider than a window's share of the axis."""

import pytest

from clipscribe.review_report.figures import Text, line_chart, text_width


def _x_labels(fig, first_baseline):
    return [t for t in fig.items if isinstance(t, Text) and t.y >= first_baseline]


def _overlaps(labels):
    """Pairs of labels on one baseline whose drawn extents meet."""
    spans = sorted((t.y, t.x - text_width(t.text, t.size) / 2, t.x + text_width(t.text, t.size) / 2)
                   for t in labels)
    return [(a, b) for a, b in zip(spans, spans[1:]) if a[0] == b[0] and b[1] < a[2]]


@pytest.mark.parametrize("n,clips,lines", [(6, 8, 1), (6, 16667, 2), (30, 16667, 2)])
def test_trend_labels_fit_side_by_side(n, clips, lines):
    pts = [(f"#{i + 1} ({clips} clips)", 0.45, "") for i in range(n)]
    fig = line_chart("Label agreement over time", pts)
    labels = _x_labels(fig, fig.height - 40 + 18)
    assert not _overlaps(labels)
    assert len({t.y for t in labels}) == lines
    if n <= 6:  # every window is named while they fit at all
        assert {t.text for t in labels} >= {f"#{i + 1}" if lines == 2 else pts[i][0]
                                             for i in range(n)}
