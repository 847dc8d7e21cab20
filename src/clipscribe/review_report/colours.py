"""Colour scales of the agreement board and report (our own anchors).

Both ramps avoid red-green contrasts, so they read for the common colour-vision deficiencies:
agreement values (-1..1) use a diverging orange - pale - blue ramp (orange: worse than chance,
blue: agreement); counts use a single blue hue from pale to dark. Lightness changes
monotonically along each half, so the scales also survive greyscale printing.
"""

from __future__ import annotations

import math

DIVERGING = ((-1.0, "#b4541a"), (-0.5, "#e39a5c"), (0.0, "#f3efe9"), (0.5, "#7fa8cf"),
             (1.0, "#1d4f87"))
SEQUENTIAL = ((0.0, "#f2f5f9"), (0.35, "#b9cde3"), (0.7, "#5b89ba"), (1.0, "#173e6b"))
MISSING = "#d9d9d9"
INK = "#1d2126"
MUTED = "#5f6b78"
GRID = "#c9d1da"
ACCENT = "#1d4f87"
BAND_FILLS = ("#f7f3ee", "#f1f4f8")  # alternating Landis & Koch band stripes


def _rgb(h: str) -> tuple[int, int, int]:
    h = h.lstrip("#")
    return int(h[0:2], 16), int(h[2:4], 16), int(h[4:6], 16)


def _hex(rgb) -> str:
    return "#" + "".join(f"{max(0, min(255, round(c))):02x}" for c in rgb)


def _ramp(anchors, x: float) -> str:
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return MISSING
    x = min(max(x, anchors[0][0]), anchors[-1][0])
    for (x0, c0), (x1, c1) in zip(anchors, anchors[1:]):
        if x <= x1:
            t = 0.0 if x1 == x0 else (x - x0) / (x1 - x0)
            a, b = _rgb(c0), _rgb(c1)
            return _hex(tuple(p + (q - p) * t for p, q in zip(a, b)))
    return anchors[-1][1]


def diverging(value: float | None) -> str:
    """Colour of an agreement value on [-1, 1] (clamped; None/NaN: grey)."""
    return _ramp(DIVERGING, value)


def sequential(fraction: float | None) -> str:
    """Colour of a share on [0, 1] (clamped; None/NaN: grey)."""
    return _ramp(SEQUENTIAL, fraction)


def text_on(hex_colour: str) -> str:
    """Black or white text on ``hex_colour`` by WCAG 2.1 relative luminance (W3C definition;
    the 0.179 switch point is common practice)."""
    lin = [c / 255 for c in _rgb(hex_colour)]
    lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in lin]
    lum = 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]
    return "#000000" if lum > 0.179 else "#ffffff"
