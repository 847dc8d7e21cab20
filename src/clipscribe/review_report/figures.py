"""Figures of the agreement board as plain shapes, drawn by two back ends: QPainter on screen
(:mod:`clipscribe.ui.review.paint`) and SVG in the report (:mod:`.svg`).

Why by hand instead of a plotting library: four small chart kinds do not justify a dependency;
shapes in logical units stay crisp at any screen density; and one geometry feeds both the board
and the report, so what the lead sees is what the report shows. Every shape that stands for a
number carries a ``tip``: the value and its recipe (tooltip on screen, ``<title>`` in SVG).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable, Sequence

from . import colours as C

FONT = 12.0
CHAR_W = 0.58  # average glyph width / font size, for laying out text without measuring it


@dataclass(frozen=True)
class Rect:
    x: float
    y: float
    w: float
    h: float
    fill: str
    stroke: str | None = None
    tip: str | None = None


@dataclass(frozen=True)
class Line:
    x1: float
    y1: float
    x2: float
    y2: float
    colour: str = C.INK
    width: float = 1.0
    dash: bool = False


@dataclass(frozen=True)
class Dot:
    cx: float
    cy: float
    r: float
    fill: str
    tip: str | None = None


@dataclass(frozen=True)
class Text:
    x: float
    y: float               # baseline
    text: str
    size: float = FONT
    anchor: str = "start"  # start | middle | end
    colour: str = C.INK
    bold: bool = False


@dataclass
class Figure:
    title: str
    width: float
    height: float
    items: list = field(default_factory=list)

    def add(self, *items) -> None:
        self.items.extend(items)


def text_width(s: str, size: float = FONT) -> float:
    return len(s) * size * CHAR_W


def _num(v: float | None, fmt: str = "{:.2f}") -> str:
    return "–" if v is None or (isinstance(v, float) and math.isnan(v)) else fmt.format(v)


def note_figure(title: str, note: str, *, width: float = 420) -> Figure:
    """A figure with nothing to draw: its title and, below it, why (wrapped to ``width``)."""
    width = max(width, text_width(title, 13) + 12)
    per_line = max(20, int(width / (11 * CHAR_W)))
    lines: list[str] = []
    for word in note.split():
        if lines and len(lines[-1]) + 1 + len(word) <= per_line:
            lines[-1] += " " + word
        else:
            lines.append(word)
    fig = Figure(title, width, 30 + 16 * len(lines) + 8)
    fig.add(Text(0, 16, title, 13, bold=True))
    for i, line in enumerate(lines):
        fig.add(Text(0, 38 + 16 * i, line, 11, "start", C.MUTED))
    return fig


def heat_map(title: str, rows: Sequence[str], cols: Sequence[str],
             values: Sequence[Sequence[float | None]], *, colour: Callable[[float | None], str],
             cell_text: Callable[[float | None], str], tips: Sequence[Sequence[str]],
             legend: tuple[str, float, float, str], cell: float = 46.0,
             labels: Sequence[Sequence[str]] | None = None) -> Figure:
    """A grid of coloured cells with row and column names and a colour legend.

    ``legend`` is (caption, low, high, kind) with kind "diverging" or "sequential"; ``labels``
    (optional) replace ``cell_text`` of each value."""
    left = max([text_width(r, 11) for r in rows] + [40]) + 14
    widest = max([text_width(c, 11) for c in cols] + [20])
    cell = max(cell, min(84.0, widest + 10))
    stagger = widest + 4 > cell  # still too wide: two rows of column names
    top = 46 + (13 if stagger else 0)
    w = left + cell * len(cols) + 20
    fig = Figure(title, max(w, 300, text_width(title, 13) + 12), top + cell * len(rows) + 62)
    fig.add(Text(0, 16, title, 13, bold=True))
    for j, name in enumerate(cols):
        fig.add(Text(left + cell * (j + 0.5), top - 8 - (j % 2) * 13 * stagger, name, 11,
                     "middle", C.MUTED))
    for i, name in enumerate(rows):
        y = top + cell * i
        fig.add(Text(left - 8, y + cell / 2 + 4, name, 11, "end", C.MUTED))
        for j in range(len(cols)):
            v = values[i][j]
            fill = colour(v)
            fig.add(Rect(left + cell * j, y, cell - 2, cell - 2, fill, tip=tips[i][j]),
                    Text(left + cell * j + (cell - 2) / 2, y + cell / 2 + 3,
                         labels[i][j] if labels else cell_text(v), 11,
                         "middle", C.text_on(fill)))
    _legend(fig, left, top + cell * len(rows) + 16, min(cell * len(cols), 260), *legend)
    return fig


def _legend(fig: Figure, x: float, y: float, w: float, caption: str, lo: float, hi: float,
            kind: str) -> None:
    steps = 24
    ramp = C.diverging if kind == "diverging" else C.sequential
    w = max(w, 160)
    for k in range(steps):
        t = k / (steps - 1)
        v = lo + (hi - lo) * t if kind == "diverging" else t
        fig.add(Rect(x + w * k / steps, y, w / steps + 0.5, 10, ramp(v)))
    fig.add(Text(x, y + 24, _num(lo, "{:g}"), 10, "start", C.MUTED),
            Text(x + w, y + 24, _num(hi, "{:g}"), 10, "end", C.MUTED),
            Text(x + w / 2, y + 24, caption, 10, "middle", C.MUTED))


def interval_chart(title: str, rows: Sequence[tuple[str, float | None, float | None,
                                                    float | None, str]], *,
                   bands: Sequence[tuple[float, str]] = (), lo: float = -0.2,
                   hi: float = 1.0, width: float = 520) -> Figure:
    """Dots with 95 % interval whiskers on a [lo, hi] axis; ``rows`` are (name, value, low,
    high, tip). ``bands`` (upper bound, name) shade verbal bands behind the axis."""
    left = max([text_width(r[0]) for r in rows] + [60]) + 14
    row_h, top = 26.0, 44.0
    plot_w = width - left - 60
    width = max(width, text_width(title, 13) + 12)
    fig = Figure(title, width, top + row_h * len(rows) + 36)
    fig.add(Text(0, 16, title, 13, bold=True))

    def x_of(v: float) -> float:
        return left + plot_w * (min(max(v, lo), hi) - lo) / (hi - lo)

    bottom = top + row_h * len(rows)
    prev = 0.0
    for k, (upper, name) in enumerate(bands):
        a, b = x_of(prev), x_of(upper)
        fig.add(Rect(a, top - 6, b - a, bottom - top + 6, C.BAND_FILLS[k % 2]),
                Text((a + b) / 2, top - 10, name, 9, "middle", C.MUTED))
        prev = upper
    for t in (lo, 0.0, 0.2, 0.4, 0.6, 0.8, 1.0):
        if lo <= t <= hi:
            fig.add(Line(x_of(t), top - 6, x_of(t), bottom, C.GRID, 1, t != 0.0),
                    Text(x_of(t), bottom + 16, f"{t:g}", 10, "middle", C.MUTED))
    for i, (name, v, a, b, tip) in enumerate(rows):
        y = top + row_h * i + row_h / 2
        fig.add(Text(left - 8, y + 4, name, 11, "end"))
        if v is None or math.isnan(v):
            fig.add(Text(left + 4, y + 4, "not measurable", 10, "start", C.MUTED))
            continue
        if a is not None and b is not None and not (math.isnan(a) or math.isnan(b)):
            fig.add(Line(x_of(a), y, x_of(b), y, C.ACCENT, 2),
                    Line(x_of(a), y - 5, x_of(a), y + 5, C.ACCENT, 2),
                    Line(x_of(b), y - 5, x_of(b), y + 5, C.ACCENT, 2))
        fig.add(Dot(x_of(v), y, 5.5, C.diverging(v), tip),
                Text(width - 4, y + 4, _num(v), 11, "end"))
    return fig


def bar_chart(title: str, rows: Sequence[tuple[str, float | None, str]], *, unit: str = "",
              fmt: str = "{:.1f}", width: float = 420) -> Figure:
    """Horizontal bars from zero, to the right for positive values and to the left for negative
    ones; rows are (name, value, tip)."""
    left = max([text_width(r[0]) for r in rows] + [60]) + 14
    row_h, top = 26.0, 30.0
    vals = [v for _, v, _ in rows if v is not None and not math.isnan(v)]
    peak = max(vals) if vals else 1.0
    low, high = min(min(vals, default=0.0), 0.0), max(peak, 0.0)
    plot_w = width - left - 70
    scale = plot_w / (high - low) if high > low else 0.0
    zero = left - low * scale  # where a bar starts; negative bars run left of it
    width = max(width, text_width(title, 13) + 12)
    fig = Figure(title, width, top + row_h * len(rows) + 16)
    fig.add(Text(0, 16, title, 13, bold=True))
    for i, (name, v, tip) in enumerate(rows):
        y = top + row_h * i
        fig.add(Text(left - 8, y + row_h / 2 + 4, name, 11, "end"))
        if v is None or math.isnan(v):
            fig.add(Text(left + 4, y + row_h / 2 + 4, "not measured", 10, "start", C.MUTED))
            continue
        w = v * scale  # negative for a negative value
        biggest = max(high, -low)
        shade = C.sequential(0.55 + 0.4 * (abs(v) / biggest if biggest > 0 else 0))
        fig.add(Rect(min(zero, zero + w), y + 5, max(abs(w), 1.5), row_h - 10, shade, tip=tip),
                Text(zero + max(w, 0) + 6, y + row_h / 2 + 4, _num(v, fmt) + unit, 11))
    return fig


def _axis_labels(labels: Sequence[str], room: float) -> list[list[str]]:
    """Each x label as the lines it is drawn in, within ``room`` pixels a label: on one line
    when all fit, else broken before " (" onto two ("#3 (16667 clips)" under a 100k-clip
    trend, drawn "#3" over "16667 clips"); labels that still do not fit are shown one in
    every few, the rest left out."""
    fits = lambda parts: all(text_width(t, 10) <= room - 4 for t in parts)  # noqa: E731
    if all(fits([label]) for label in labels):
        return [[label] for label in labels]
    lines = [_broken(label) for label in labels]
    widest = max((text_width(t, 10) for parts in lines for t in parts), default=0.0)
    step = 1 if all(fits(parts) for parts in lines) else math.ceil((widest + 4) / max(room, 1))
    return [parts if i % step == 0 else [] for i, parts in enumerate(lines)]


def _broken(label: str) -> list[str]:
    head, sep, rest = label.partition(" (")
    return [head, rest[:-1] if rest.endswith(")") else rest] if sep else [label]


def line_chart(title: str, points: Sequence[tuple[str, float | None, str]], *,
               lo: float = -0.2, hi: float = 1.0, width: float = 520,
               height: float = 220) -> Figure:
    """One series over ordered windows; points are (x label, value, tip)."""
    left, top, right, bottom = 44.0, 44.0, 20.0, 40.0
    width = max(width, text_width(title, 13) + 12)
    fig = Figure(title, width, height)
    fig.add(Text(0, 16, title, 13, bold=True))
    pw, ph = width - left - right, height - top - bottom
    n = max(len(points), 1)

    def xy(i: int, v: float) -> tuple[float, float]:
        x = left + (pw * (i + 0.5) / n)
        return x, top + ph * (1 - (min(max(v, lo), hi) - lo) / (hi - lo))

    for t in (0.0, 0.2, 0.4, 0.6, 0.8, 1.0):
        _, y = xy(0, t)
        fig.add(Line(left, y, width - right, y, C.GRID, 1, t != 0.0),
                Text(left - 6, y + 4, f"{t:g}", 10, "end", C.MUTED))
    prev = None
    lines = _axis_labels([label for label, _, _ in points], pw / n)
    for i, (label, v, tip) in enumerate(points):
        x, _ = xy(i, 0)
        for k, part in enumerate(lines[i]):
            fig.add(Text(x, height - bottom + 18 + 12 * k, part, 10, "middle", C.MUTED))
        if v is None or math.isnan(v):
            prev = None
            continue
        x, y = xy(i, v)
        if prev is not None:
            fig.add(Line(prev[0], prev[1], x, y, C.ACCENT, 2))
        prev = (x, y)
    for i, (label, v, tip) in enumerate(points):
        if v is not None and not math.isnan(v):
            x, y = xy(i, v)
            fig.add(Dot(x, y, 5, C.diverging(v), tip), Text(x, y - 9, _num(v), 10, "middle"))
    return fig
