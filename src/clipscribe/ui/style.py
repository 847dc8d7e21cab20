"""The workbench style sheet (our own: quiet greys, a teal accent, amber playhead)."""

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
