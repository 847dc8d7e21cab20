"""The Qt bindings must not give up references to ``None`` while the real widgets paint.

PySide6 6.12.0 drops one reference to ``None`` on every wrapped call that returns nothing
(``setPen``, ``fillRect``, ``QPainterPath.lineTo``, ...). Python before 3.12 counts references to
``None`` and aborts with "Fatal Python error: none_dealloc" once the count reaches zero: holding
Right for a few seconds in the work view was enough. This test paints every drawing-heavy widget
of both views many times and checks that the count of references to ``None`` did not fall; with
6.12.0 on Python 3.11 it falls by thousands, with a sound build it stays put.
"""

from __future__ import annotations

import ctypes
import gc
import sys

import numpy as np
import pytest

from clipscribe.ui import boot

pytestmark = pytest.mark.skipif(
    sys.version_info >= (3, 12),
    reason="from Python 3.12 None is immortal: its reference count never moves, so there is "
           "nothing to lose and nothing this test could see")

ROUNDS = 25
#: garbage, caches and threads may settle some references either way (CI once saw 21); a
#: faulty binding loses one per void call, i.e. dozens per widget per paint, thousands over
#: the loop
TOLERANCE = 200


def _give_back(lost: int) -> None:
    """Return references a faulty binding took, so the rest of the run is not aborted at exit
    and the failure is reported as a failure, not a core dump."""
    for _ in range(lost):
        ctypes.pythonapi.Py_IncRef(ctypes.py_object(None))


def _paint_all(widgets, frame_count: int) -> None:
    for i in range(ROUNDS):
        frame = (i * 7) % max(1, frame_count)
        for w in widgets:
            if hasattr(w, "set_playhead"):
                w.set_playhead(frame)
            w.grab()  # runs paintEvent into a pixmap


def test_painting_the_real_widgets_keeps_every_reference_to_none(window, qtbot):
    w, _ = window()  # the review view, its queue ranked; the work view lives beside it
    page = w.review_desk
    desk = page.desk
    with qtbot.waitSignal(page.board.loaded, timeout=30000, raising=False):
        page.setCurrentWidget(page.board)
    qtbot.waitUntil(lambda: page.board.data is not None, timeout=30000)
    # background work (the cues panel, the desk's ranking after the board, suggestions) moves
    # the count of references to None from other threads: let all of it end first
    from clipscribe.ui.workers import JobRunner
    runners = w.findChildren(JobRunner)
    qtbot.waitUntil(lambda: page.board.cues is not None and all(r.idle() for r in runners),
                    timeout=180_000)
    frames = max(2, w.scrub.frame_count)
    w.scrub.set_curve(np.abs(np.sin(np.linspace(0, 12, 400))))  # a long QPainterPath
    widgets = [w.scrub, w.timeline, desk.tracks, *page.board.figs.values()]
    for wd in widgets:
        wd.resize(max(wd.width(), 700), max(wd.height(), 80))
    assert desk.tracks.tracks, "the sample's first disputed clip should have segment tracks"
    _paint_all(widgets, frames)  # warm-up: fonts, glyph caches, lazily made objects
    gc.collect()
    before = sys.getrefcount(None)
    _paint_all(widgets, frames)
    gc.collect()
    lost = before - sys.getrefcount(None)
    if lost > TOLERANCE:
        _give_back(lost)
    assert lost <= TOLERANCE, (
        f"{lost} references to None lost over {ROUNDS} paints of {len(widgets)} widgets: this "
        f"PySide6 build would crash Python {sys.version.split()[0]} (none_dealloc)")


def test_the_startup_probe_finds_this_build_sound():
    assert boot.none_references_lost() == 0
    assert boot.check_bindings() is None


def test_a_known_bad_build_is_refused_with_one_line(monkeypatch):
    import PySide6
    monkeypatch.setattr(PySide6, "__version__", "6.12.0")
    msg = boot.check_bindings()
    assert msg is not None and "\n" not in msg
    assert "PySide6 6.12.0" in msg and "PySide6-Essentials!=6.12.0" in msg


def test_an_unknown_build_that_loses_references_is_refused(monkeypatch):
    import PySide6
    monkeypatch.setattr(PySide6, "__version__", "6.99.0")  # not in the known-bad table
    monkeypatch.setattr(boot, "none_references_lost", lambda calls=boot.PROBE_CALLS: calls)
    msg = boot.check_bindings()
    assert msg is not None and "loses references to None" in msg


def test_clipscribe_open_refuses_a_bad_build_before_any_window(monkeypatch, capsys, tmp_path):
    from clipscribe import cli
    monkeypatch.setattr(boot, "check_bindings", lambda: "PySide6 6.12.0 loses a reference")
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    code = cli.main(["open", str(tmp_path), "--screenshot", str(tmp_path / "x.png")])
    err = capsys.readouterr().err
    assert code == 1
    assert err.strip().splitlines() == ["clipscribe: error: PySide6 6.12.0 loses a reference"]
    assert not (tmp_path / "x.png").exists()
