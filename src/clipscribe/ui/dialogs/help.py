"""The shortcut sheet (built from the window's actions, so it cannot drift) and the note on
working with video of people."""

from __future__ import annotations

from PySide6.QtGui import QAction, QKeySequence
from PySide6.QtWidgets import (
    QDialog, QDialogButtonBox, QHeaderView, QTableWidget, QTableWidgetItem, QTextBrowser,
    QVBoxLayout, QWidget,
)

CAUTIONS_HTML = """
<h3>Working with video of people</h3>
<p><b>Consent.</b> Work only on clips whose people agreed to be recorded and to this use. If a
clip shows someone who plainly did not agree (a passer-by, a child, a private moment), skip it
with that reason and tell your lead.</p>
<p><b>Privacy law and retention.</b> Video of people is personal data in many places. Keep clips
inside the project; do not copy, screenshot or share them outside it; and delete local copies when
the project's retention period ends. Your local law and the data owner's policy come first —
this note does not replace them.</p>
<p><b>Disturbing content and your wellbeing.</b> Some footage can be upsetting. You may skip any
clip, giving a short reason such as “upsetting”. Take regular breaks away from the screen,
and talk to your lead if something stays with you.</p>
<p><b>Bias in labels.</b> Label what happens, not who does it. Avoid guessing age, gender,
ethnicity or intent from appearance. Where you are not sure, flag the clip as unsure rather
than guess: unsure flags help the lead improve the guideline.</p>
"""


class ShortcutSheet(QDialog):
    """Every action with a shortcut, read from the actions themselves."""

    def __init__(self, actions: list[QAction], parent: QWidget | None = None, *,
                 extra_rows: list[tuple[str, str, str]] = (), title: str = "Keyboard shortcuts"
                 ) -> None:
        """``extra_rows``: (keys, command, group) of keys that are no action (such as the
        Alt+digit of a row of buttons), listed first."""
        super().__init__(parent)
        self.setWindowTitle(title)
        rows = list(extra_rows) + shortcut_rows(actions)
        table = QTableWidget(len(rows), 3, self)
        table.setObjectName("shortcutTable")
        table.setHorizontalHeaderLabels(["Key", "Command", "Where"])
        for r, (keys, name, menu) in enumerate(rows):
            for c, text in enumerate((keys, name, menu)):
                table.setItem(r, c, QTableWidgetItem(text))
        table.verticalHeader().hide()
        table.verticalHeader().setDefaultSectionSize(table.fontMetrics().height() + 8)
        head = table.horizontalHeader()
        for col, mode in enumerate((QHeaderView.ResizeMode.ResizeToContents,  # keys never cut
                                    QHeaderView.ResizeMode.Stretch,
                                    QHeaderView.ResizeMode.ResizeToContents)):
            head.setSectionResizeMode(col, mode)
        table.setEditTriggers(QTableWidget.EditTrigger.NoEditTriggers)
        table.resizeColumnsToContents()
        wanted = sum(table.columnWidth(c) for c in range(3)) + 60
        avail = (parent.screen() or self.screen()).availableGeometry() if parent else None
        self.resize(min(max(560, wanted), avail.width() - 40) if avail else max(560, wanted),
                    min(620, avail.height() - 60) if avail else 620)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.reject)
        lay = QVBoxLayout(self)
        lay.addWidget(table)
        lay.addWidget(buttons)
        self.table = table


def shortcut_rows(actions: list[QAction]) -> list[tuple[str, str, str]]:
    """(keys, command, group) for every action that has a shortcut, in menu order."""
    out = []
    for a in actions:
        keys = ", ".join(k.toString(QKeySequence.SequenceFormat.NativeText) for k in a.shortcuts())
        if keys:
            out.append((keys, a.text().replace("&", ""), a.property("group") or ""))
    return out


class CautionsNote(QDialog):
    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        self.setWindowTitle("Working with video of people")
        self.resize(560, 520)
        text = QTextBrowser(self)
        text.setHtml(CAUTIONS_HTML)
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Close)
        buttons.rejected.connect(self.reject)
        lay = QVBoxLayout(self)
        lay.addWidget(text)
        lay.addWidget(buttons)
