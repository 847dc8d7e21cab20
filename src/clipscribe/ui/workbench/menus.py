"""The menu bar, built from the window's actions."""

from __future__ import annotations

from PySide6.QtWidgets import QDockWidget


def build_menus(w) -> None:
    a = w.actions_
    bar = w.menuBar()
    m = bar.addMenu("&File")
    m.addAction(a["open_other"])
    m.addAction(a["setup"])
    m.addAction(a["import"])
    m.addAction(a["export"])
    m.addSeparator()
    m.addAction(a["quit"])
    m = bar.addMenu("&Edit")
    for k in ("undo", "redo", None, "captions", "queue", "viewer"):
        m.addSeparator() if k is None else m.addAction(a[k])
    m = bar.addMenu("&Clip")
    for k in ("submit", "skip", "unsure", "reopen", None, "next_unfinished", "next_clip",
              "prev_clip", None, "clear_label"):
        m.addSeparator() if k is None else m.addAction(a[k])
    labels = m.addMenu("Clip label")
    for info in w.label_infos:
        labels.addAction(a[f"label:{info.name}"])
    m = bar.addMenu("&Playback")
    for k in ("play", None, "back_frame", "fwd_frame", "back_second", "fwd_second", "first_frame",
              "last_frame", None, "slower", "faster", "loop"):
        m.addSeparator() if k is None else m.addAction(a[k])
    m = bar.addMenu("&Segments")
    for k in ("mark_start", "mark_end", None, "split", "merge", "delete_segment", None,
              "prev_segment", "next_segment"):
        m.addSeparator() if k is None else m.addAction(a[k])
    seglabels = m.addMenu("Segment label")
    for info in w.label_infos:
        if f"seglabel:{info.name}" in a:
            seglabels.addAction(a[f"seglabel:{info.name}"])
    m = bar.addMenu("&View")
    m.addAction(a["work_view"])
    m.addAction(a["review_view"])
    m.addSeparator()
    for d in w.findChildren(QDockWidget):
        m.addAction(d.toggleViewAction())
    m = bar.addMenu("&Help")
    m.addAction(a["shortcuts"])
    m.addAction(a["cautions"])
