"""The agreement board's numbers, figures and the shareable report (HTML + CSV). No Qt.

``write_report(project, folder)`` writes ``report.html`` and the CSV tables; ``board_data``
collects every number once; ``board_figures`` lays the figures out for both QPainter and SVG.
"""

from .board import board_data, board_figures
from .html import ReportFiles, read_numbers, render_html, write_report

__all__ = ["ReportFiles", "board_data", "board_figures", "read_numbers", "render_html",
           "write_report"]
