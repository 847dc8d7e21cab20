"""Colours of the workbench (our own scheme: slate greys with a teal accent)."""

VIEWER_BG = "#1d2126"
TRACK_BG = "#2a3038"
TRACK_GRID = "#3a424d"
OTHERS_BG = "#232931"   # the others' thin tracks, a shade under one's own
MUTED_TEXT = "#9aa4b0"
STATUS_TEXT = "#f2f4f7"  # background-job words over the thumbnail strip, on STATUS_BG
STATUS_BG = "#1d2126"
PLAYHEAD = "#ffd166"
MARK = "#06d6a0"
CURVE = "#5ec2b7"
CURVE_FILL = (94, 194, 183, 90)  # r, g, b, alpha
SELECTED = "#ffffff"
SAVED_OK = "#2e7d32"
SAVED_BAD = "#c62828"


def luminance(hex_colour: str) -> float:
    """Relative luminance of an sRGB colour (W3C WCAG 2.1, definition of relative luminance)."""
    h = hex_colour.lstrip("#")
    r, g, b = (int(h[i:i + 2], 16) / 255 for i in (0, 2, 4))
    lin = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in (r, g, b)]
    return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]


def contrast_ratio(a: str, b: str) -> float:
    """(L1 + 0.05) / (L2 + 0.05), the lighter over the darker (W3C WCAG 2.1, contrast ratio)."""
    hi, lo = sorted((luminance(a), luminance(b)), reverse=True)
    return (hi + 0.05) / (lo + 0.05)


def text_colour_on(hex_colour: str) -> str:
    """Black or white, whichever reads better on ``hex_colour`` (WCAG relative luminance,
    W3C WCAG 2.1 §1.4.3 definition; threshold 0.179 is common practice)."""
    return "#000000" if luminance(hex_colour) > 0.179 else "#ffffff"
