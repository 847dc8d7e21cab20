"""How a segment box is drawn on a track, the same in the workbench and on the review desk:
a labelled segment in its label's colour, an unlabelled one (no label chosen yet) as a hatched
slate box with a dashed edge, named "unlabelled"."""

from __future__ import annotations

from PySide6.QtCore import QRectF, Qt
from PySide6.QtGui import QBrush, QColor, QPainter, QPen

from . import theme

UNLABELLED = "unlabelled"
NO_COLOUR = "#888888"  # a label the colour table does not know


def label_text(label: str | None) -> str:
    """A segment's label as screens write it."""
    return UNLABELLED if label is None else label


def paint_segment(p: QPainter, r: QRectF, label: str | None, colours: dict[str, str], *,
                  text: str | None = None, alpha: int = 255) -> None:
    """Fill ``r`` for a segment of ``label`` (None: unlabelled) and write ``text`` in it."""
    if label is None:
        fill = QColor(theme.UNLABELLED_FILL)
        hatch = QColor(theme.UNLABELLED_HATCH)
        fill.setAlpha(alpha)
        hatch.setAlpha(alpha)
        p.fillRect(r, fill)
        p.fillRect(r, QBrush(hatch, Qt.BrushStyle.BDiagPattern))
        p.setPen(QPen(hatch, 1, Qt.PenStyle.DashLine))
        p.drawRect(r.adjusted(0.5, 0.5, -0.5, -0.5))
    else:
        fill = QColor(colours.get(label, NO_COLOUR))
        fill.setAlpha(alpha)
        p.fillRect(r, fill)
    if text:
        base = theme.UNLABELLED_FILL if label is None else colours.get(label, NO_COLOUR)
        room = r.adjusted(4, 0, -2, 0)
        if label is None:  # a plain strip behind the words, so the hatching does not cross them
            fm = p.fontMetrics()
            width = min(room.width(), fm.horizontalAdvance(text) + 4)
            p.fillRect(QRectF(room.left() - 2, r.center().y() - fm.height() / 2, width,
                              fm.height()), QColor(theme.UNLABELLED_FILL))
        p.setPen(QColor(theme.text_colour_on(QColor(base).name())))
        p.drawText(room, Qt.AlignmentFlag.AlignVCenter, text)
