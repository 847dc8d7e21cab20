"""Keyboard focus and window placement helpers of the workbench."""

from __future__ import annotations

from PySide6.QtCore import QRect, Qt
from PySide6.QtWidgets import QWidget


class FocusRing(QWidget):
    """A panel whose Tab and Shift+Tab go round its own fields only, so Tab from the last
    field comes back to the first instead of wandering into other panels (where type-ahead
    would change a filter unseen)."""

    def fields(self) -> list[QWidget]:
        """The widgets Tab visits, in the window's focus-chain order."""
        out, w = [], self.nextInFocusChain()
        seen = set()
        while w is not None and id(w) not in seen:
            seen.add(id(w))
            if (self.isAncestorOf(w) and w.isVisibleTo(self) and w.isEnabled()
                    and w.focusPolicy() & Qt.FocusPolicy.TabFocus):
                out.append(w)
            w = w.nextInFocusChain()
            if w is self:
                break
        return out

    def focusNextPrevChild(self, next: bool) -> bool:  # noqa: N802, A002
        fields = self.fields()
        here = self.focusWidget()
        while here is not None and here not in fields and self.isAncestorOf(here):
            here = here.parentWidget()  # e.g. the line edit inside an editable combo box
        if not fields:
            return super().focusNextPrevChild(next)
        i = fields.index(here) if here in fields else (-1 if next else 0)
        target = fields[(i + (1 if next else -1)) % len(fields)]
        target.setFocus(Qt.FocusReason.TabFocusReason if next else Qt.FocusReason.BacktabFocusReason)
        return True


WANTED = (1440, 900)   # the window's size when the screen has room for it
FRAME = (16, 40)       # room left for the window's frame and title bar, which the desktop adds


def fit_window(w: QWidget, avail: QRect, saved=None) -> bool:
    """Place ``w`` on the screen area ``avail``: its saved geometry when that lies wholly on
    the area (True), else WANTED shrunk to the area (less room for the frame), centred on it."""
    if saved is not None and w.restoreGeometry(saved) and avail.contains(w.geometry()) \
            and w.width() >= w.minimumWidth() and w.height() >= w.minimumHeight():
        return True
    width = min(WANTED[0], avail.width() - FRAME[0])
    height = min(WANTED[1], avail.height() - FRAME[1])
    w.resize(max(width, w.minimumWidth()), max(height, w.minimumHeight()))
    w.move(avail.left() + max(0, (avail.width() - w.width() - FRAME[0]) // 2),
           avail.top() + max(0, (avail.height() - w.height() - FRAME[1]) // 2))
    return False
