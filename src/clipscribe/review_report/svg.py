"""The SVG back end of :mod:`.figures`: one inline ``<svg>`` per figure, no external fonts or
links; a shape's ``tip`` becomes its ``<title>`` (the browser shows it on hover)."""

from __future__ import annotations

from html import escape

from .figures import Dot, Figure, Line, Rect, Text

_ANCHOR = {"start": "start", "middle": "middle", "end": "end"}


def _tip(tip: str | None) -> str:
    return f"<title>{escape(tip)}</title>" if tip else ""


def _f(v: float) -> str:
    return f"{v:.1f}".rstrip("0").rstrip(".")


def to_svg(fig: Figure) -> str:
    """The figure as a self-contained ``<svg>`` element (system sans-serif font)."""
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{_f(fig.width)}" '
           f'height="{_f(fig.height)}" viewBox="0 0 {_f(fig.width)} {_f(fig.height)}" '
           f'role="img" aria-label="{escape(fig.title)}" font-family="sans-serif">']
    for it in fig.items:
        if isinstance(it, Rect):
            stroke = f' stroke="{it.stroke}"' if it.stroke else ""
            body = _tip(it.tip)
            out.append(f'<rect x="{_f(it.x)}" y="{_f(it.y)}" width="{_f(it.w)}" '
                       f'height="{_f(it.h)}" fill="{it.fill}"{stroke}>{body}</rect>'
                       if body else
                       f'<rect x="{_f(it.x)}" y="{_f(it.y)}" width="{_f(it.w)}" '
                       f'height="{_f(it.h)}" fill="{it.fill}"{stroke}/>')
        elif isinstance(it, Line):
            dash = ' stroke-dasharray="3 3"' if it.dash else ""
            out.append(f'<line x1="{_f(it.x1)}" y1="{_f(it.y1)}" x2="{_f(it.x2)}" '
                       f'y2="{_f(it.y2)}" stroke="{it.colour}" stroke-width="{_f(it.width)}"'
                       f'{dash}/>')
        elif isinstance(it, Dot):
            out.append(f'<circle cx="{_f(it.cx)}" cy="{_f(it.cy)}" r="{_f(it.r)}" '
                       f'fill="{it.fill}" stroke="#1d2126">{_tip(it.tip)}</circle>')
        elif isinstance(it, Text):
            weight = ' font-weight="bold"' if it.bold else ""
            out.append(f'<text x="{_f(it.x)}" y="{_f(it.y)}" font-size="{_f(it.size)}" '
                       f'text-anchor="{_ANCHOR[it.anchor]}" fill="{it.colour}"{weight}>'
                       f'{escape(it.text)}</text>')
    out.append("</svg>")
    return "".join(out)
