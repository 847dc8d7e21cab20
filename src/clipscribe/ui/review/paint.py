"""QPainter back end of :mod:`clipscribe.review_report.figures`, and a widget that shows one
figure with its numbers' recipes on hover (tooltip and the ``hovered`` signal for a details pane).

The figures are drawn natively rather than with a plotting library: no extra dependency, crisp
at any screen density (vector drawing in logical units), and the same shapes are written as SVG
into the report, so the board and the report show the same picture.
"""

from __future__ import annotations

from PySide6.QtCore import QPointF, QRectF, QSize, Qt, Signal
from PySide6.QtGui import QColor, QFont, QPainter, QPen
from PySide6.QtWidgets import QSizePolicy, QToolTip, QWidget

from .. import theme
from ...review_report.figures import Dot, Figure, Line, Rect, Text

_ALIGN = {"start": Qt.AlignmentFlag.AlignLeft, "middle": Qt.AlignmentFlag.AlignHCenter,
          "end": Qt.AlignmentFlag.AlignRight}


def paint_figure(p: QPainter, fig: Figure) -> None:
    """Draw ``fig`` at the painter's origin in logical units (1 unit = 1 px at 100 %)."""
    p.setRenderHint(QPainter.RenderHint.Antialiasing, True)
    p.setRenderHint(QPainter.RenderHint.TextAntialiasing, True)
    base = QFont(p.font())
    for it in fig.items:
        if isinstance(it, Rect):
            r = QRectF(it.x, it.y, it.w, it.h)
            p.fillRect(r, QColor(it.fill))
            if it.stroke:
                p.setPen(QColor(it.stroke))
                p.drawRect(r)
        elif isinstance(it, Line):
            pen = QPen(QColor(it.colour), it.width)
            if it.dash:
                pen.setStyle(Qt.PenStyle.DashLine)
            p.setPen(pen)
            p.drawLine(QPointF(it.x1, it.y1), QPointF(it.x2, it.y2))
        elif isinstance(it, Dot):
            p.setPen(QPen(QColor("#1d2126"), 1))
            p.setBrush(QColor(it.fill))
            p.drawEllipse(QPointF(it.cx, it.cy), it.r, it.r)
            p.setBrush(Qt.BrushStyle.NoBrush)
        elif isinstance(it, Text):
            f = QFont(base)
            f.setPixelSize(max(1, round(it.size)))
            f.setBold(it.bold)
            p.setFont(f)
            p.setPen(QColor(it.colour))
            width = 2000.0
            x = {"start": it.x, "middle": it.x - width / 2, "end": it.x - width}[it.anchor]
            # the figure's y is the baseline: place a box whose baseline lands there
            ascent = p.fontMetrics().ascent()
            p.drawText(QRectF(x, it.y - ascent, width, p.fontMetrics().height()),
                       _ALIGN[it.anchor] | Qt.AlignmentFlag.AlignTop, it.text)
    p.setFont(base)


class FigureView(QWidget):
    """One figure; hovering a mark shows its value and recipe."""

    hovered = Signal(str)

    def __init__(self, fig: Figure | None = None, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setMouseTracking(True)
        self.setSizePolicy(QSizePolicy.Policy.Fixed, QSizePolicy.Policy.Fixed)
        self.setFocusPolicy(Qt.FocusPolicy.StrongFocus)  # Tab or a click lists its numbers
        self.fig = fig or Figure("", 10, 10)
        self.scale = 1.0  # drawn smaller than the figure's own size, to fit a narrow screen
        self.set_figure(self.fig)

    def set_figure(self, fig: Figure) -> None:
        self.fig = fig
        self.setAccessibleName(fig.title)
        self.setFixedSize(self.sizeHint())
        self.update()

    def set_scale(self, scale: float) -> None:
        if scale != self.scale:
            self.scale = scale
            self.setFixedSize(self.sizeHint())
            self.update()

    def natural_width(self) -> int:
        return int(self.fig.width + 2)

    def sizeHint(self) -> QSize:  # noqa: N802
        return QSize(int((self.fig.width + 2) * self.scale), int((self.fig.height + 2) * self.scale))

    def tip_at(self, x: float, y: float) -> str | None:
        """The tip of the topmost mark under (x, y), if any."""
        for it in reversed(self.fig.items):
            tip = getattr(it, "tip", None)
            if not tip:
                continue
            if isinstance(it, Rect) and it.x <= x <= it.x + it.w and it.y <= y <= it.y + it.h:
                return tip
            if isinstance(it, Dot) and (x - it.cx) ** 2 + (y - it.cy) ** 2 <= (it.r + 3) ** 2:
                return tip
        return None

    def all_tips(self) -> list[str]:
        return [it.tip for it in self.fig.items if getattr(it, "tip", None)]

    def paintEvent(self, event) -> None:  # noqa: N802
        p = QPainter(self)
        p.fillRect(self.rect(), QColor("#ffffff"))
        p.scale(self.scale, self.scale)
        paint_figure(p, self.fig)
        if self.hasFocus():  # which figure the details pane is about, for keyboard users too
            p.resetTransform()
            p.setPen(QPen(QColor(theme.FOCUS_FRAME), 2))
            p.setBrush(Qt.BrushStyle.NoBrush)
            p.drawRect(QRectF(self.rect()).adjusted(1, 1, -1, -1))

    def focusOutEvent(self, event) -> None:  # noqa: N802
        super().focusOutEvent(event)
        self.update()

    def mouseMoveEvent(self, event) -> None:  # noqa: N802
        pos = event.position()
        tip = self.tip_at(pos.x() / self.scale, pos.y() / self.scale)
        if tip:
            QToolTip.showText(event.globalPosition().toPoint(), tip, self)
            self.hovered.emit(tip)
        else:
            QToolTip.hideText()
