"""Keyboard focus helpers of the workbench."""

from __future__ import annotations

from PySide6.QtCore import Qt
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
