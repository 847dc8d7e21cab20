"""Colours of the workbench and its style sheet (our own scheme: slate greys with a teal
accent, amber playhead)."""

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
UNLABELLED_FILL = "#46505c"   # a segment with no label yet: slate, hatched, dashed edge
UNLABELLED_HATCH = "#8a96a3"
FOCUS_FRAME = "#0f766e"  # the board figure with keyboard focus: the teal accent
SAVED_OK = "#2e7d32"
SAVED_BAD = "#c62828"


#: the application's style sheet (widgets by object name)
STYLE_SHEET = """
QMainWindow, QDockWidget { font-size: 10pt; }
QDockWidget::title { padding: 4px 6px; background: #dfe5ea; color: #1d2126; font-weight: bold; }
QLabel#heading { font-weight: bold; margin-top: 8px; }
QLabel#clipTitle { color: #3a424d; }
QLabel#clipState { font-weight: bold; color: #0f766e; }
QLabel#captionNote { color: #b3261e; font-size: 9pt; }
QLabel#wordCount { color: #5f6b78; font-size: 9pt; }
QLabel#readout { font-family: monospace; }
QLineEdit[problem="true"] { border: 1px solid #d08a2c; background: #fff8ec; }
QLineEdit[conflict="true"] { border: 2px solid #c62828; background: #fdecea; }
QWidget#captionConflict { background: #fdecea; border: 1px solid #c62828; border-radius: 3px; }
QLabel#conflictText { color: #7f1d1d; font-size: 9pt; }
QLabel#othersLabels { color: #6b7683; font-style: italic; font-size: 9pt; }
QToolButton#othersToggle { border: none; color: #5f6b78; font-weight: bold; }
QLabel#othersCaption { color: #6b7683; font-size: 9pt; padding-left: 10px;
                       border-left: 2px solid #c9d1d9; }
QTableView#queueView { alternate-background-color: #f2f5f7; }
QTableView#queueView::item:selected { background: #0f766e; color: white; }
"""


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
