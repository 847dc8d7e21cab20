"""The UI thread keeps running while thumbnail and motion jobs work; screenshot mode."""

import subprocess
import sys
import threading

import numpy as np
from PySide6.QtCore import QTimer
from PySide6.QtGui import QImage
from videos import moving_square

from clipscribe.ui.workbench.jobs_view import ClipJobs
from clipscribe.ui.workers import FrameLoader

GATE_S = 30  # how long a gated job waits for the test before it goes on anyway


def _gated(real, gate, entered, name):
    """``real``, but first note the thread it runs on and wait for the test to open ``gate``."""
    def run(*args, **kwargs):
        entered[name] = threading.get_ident()
        gate.wait(GATE_S)
        return real(*args, **kwargs)
    return run


def test_jobs_run_off_the_ui_thread_which_keeps_serving_events(qtbot, tmp_path, monkeypatch):
    """Both jobs decode on worker threads: while they are held inside their work the UI thread
    still runs its timers, and then they deliver. (Held by a gate, not timed, so a busy machine
    cannot change the answer; the size of UI stalls is measured in benchmarks/ui_background.py.)"""
    from clipscribe.ui.workbench import jobs_view
    gate, entered = threading.Event(), {}
    monkeypatch.setattr(jobs_view, "thumbnail_strip", _gated(jobs_view.thumbnail_strip, gate, entered, "thumbs"))
    monkeypatch.setattr(jobs_view, "motion_curve", _gated(jobs_view.motion_curve, gate, entered, "motion"))
    clip = moving_square(tmp_path / "busy.mp4")
    jobs = ClipJobs()
    got = {}
    jobs.thumbnailsReady.connect(lambda imgs: got.setdefault("thumbs", imgs))
    jobs.curveReady.connect(lambda v: got.setdefault("motion", v))
    jobs.failed.connect(lambda msg: got.setdefault("error", msg))
    ticks = []
    try:
        jobs.start(clip)
        qtbot.waitUntil(lambda: len(entered) == 2, timeout=10000)
        QTimer.singleShot(0, lambda: ticks.append("ui"))  # served only by a free UI thread
        qtbot.waitUntil(lambda: ticks == ["ui"], timeout=10000)
        assert not gate.is_set() and got == {}  # the jobs are still held
    finally:
        gate.set()
    assert threading.main_thread().ident not in entered.values()
    qtbot.waitUntil(lambda: ("thumbs" in got and "motion" in got) or "error" in got, timeout=60000)
    assert "error" not in got
    assert len(got["thumbs"]) == 24 and all(isinstance(i, QImage) and not i.isNull() for i in got["thumbs"])
    assert len(got["motion"]) == 240 and float(np.max(got["motion"])) > 0


def test_jobs_cancel(qtbot, tmp_path):
    clip = moving_square(tmp_path / "cancel.mp4", frames=120)
    jobs = ClipJobs()
    results = []
    jobs.curveReady.connect(results.append)
    jobs.start(clip)
    jobs.cancel()
    assert jobs.wait(20000)
    qtbot.wait(50)
    assert results == []       # a cancelled job delivers nothing


def test_frame_loader_drops_stale_requests(qtbot, tmp_path, monkeypatch):
    """A fast scrub asks for far more frames than can be decoded: while one frame decodes, every
    newer request replaces the waiting one, so only the newest is decoded next. The first decode
    is held by a gate, so the count does not depend on the machine's speed."""
    from clipscribe.ui import workers
    gate, entered = threading.Event(), {}
    real_open = workers.open_video

    def held_open(path):
        video = real_open(path)
        first = video.frame
        def frame(i):
            if not entered:
                entered["frame"] = i
                gate.wait(GATE_S)
            return first(i)
        video.frame = frame
        return video

    monkeypatch.setattr(workers, "open_video", held_open)
    clip = moving_square(tmp_path / "scrub.mp4", frames=120)
    loader = FrameLoader(clip)
    shown = []
    loader.frameReady.connect(lambda i, img: shown.append((i, img.width(), img.height())))
    loader.start()
    try:
        loader.request(0)
        qtbot.waitUntil(lambda: entered.get("frame") == 0, timeout=10000)
        for i in range(3, 120, 3):       # 39 more requests while frame 0 decodes
            loader.request(i)
        gate.set()
        qtbot.waitUntil(lambda: bool(shown) and shown[-1][0] == 117, timeout=10000)
        assert [i for i, _w, _h in shown] == [0, 117]
        assert loader.dropped == 38      # each request but the last replaced a waiting one
        assert shown[-1][1:] == (640, 480)
    finally:
        gate.set()
        loader.stop()


def test_screenshot_mode_writes_png(sample, tmp_path):
    out = tmp_path / "shot.png"
    code = ("import sys; from clipscribe.cli import main; "
            "sys.exit(main(['open', sys.argv[1], '--user', 'annotator-1', '--screenshot', sys.argv[2]]))")
    run = subprocess.run([sys.executable, "-c", code, str(sample), str(out)],
                         capture_output=True, text=True, timeout=90)
    assert run.returncode == 0, run.stderr
    image = QImage(str(out))
    assert not image.isNull() and image.width() >= 1280 and image.height() >= 800


def test_the_loader_readies_cache_memory_while_idle_and_still_answers(qtbot, tmp_path):
    """After a frame is shown and nothing is asked, the loader makes the video's cache memory
    ready (one frame's worth at a time, so a request is never kept waiting behind all of it)."""
    from clipscribe.media.cache import SPARE_POOL
    SPARE_POOL.clear()
    clip = moving_square(tmp_path / "warm.mp4", frames=60)
    loader = FrameLoader(clip)
    shown = []
    loader.frameReady.connect(lambda i, img: shown.append(i))
    loader.start()
    try:
        loader.request(0)
        qtbot.waitUntil(lambda: shown == [0], timeout=10000)
        shape = (480, 640, 3)
        qtbot.waitUntil(lambda: sum(a.shape == shape for a in SPARE_POOL._arrays) >= 30,
                        timeout=20000)
        loader.request(30)
        qtbot.waitUntil(lambda: shown == [0, 30], timeout=10000)
    finally:
        loader.stop()
        SPARE_POOL.clear()
