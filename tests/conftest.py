"""Suite-wide setup: Qt offscreen, caches and Qt settings in a throwaway home, never the
user's; the sample project built once per run."""

import os
import tempfile
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # before Qt is imported anywhere
_HOME = tempfile.mkdtemp(prefix="clipscribe-tests-")
os.environ["XDG_CACHE_HOME"] = os.path.join(_HOME, "cache")    # frame indexes, job results
os.environ["XDG_CONFIG_HOME"] = os.path.join(_HOME, "config")  # QSettings of subprocesses

import cv2  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from PySide6.QtCore import QSettings  # noqa: E402

from clipscribe.sample import build_sample  # noqa: E402

QSettings.setDefaultFormat(QSettings.Format.IniFormat)
QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope,
                  os.path.join(_HOME, "config"))


def write_video(path: Path, n: int = 12, size: tuple[int, int] = (64, 48), seed: int = 0) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    out = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*"mp4v"), 10.0, size)
    rng = np.random.default_rng(seed)
    for i in range(n):
        img = np.full((size[1], size[0], 3), (i * 20) % 255, np.uint8)
        img[:8, :8] = rng.integers(0, 255, 3)
        out.write(img)
    out.release()
    return path


@pytest.fixture
def make_video():
    """``make_video(path, n=12, size=(64, 48), seed=0)``: a small mp4v test video at ``path``."""
    return write_video


@pytest.fixture(scope="session")
def sample_build(tmp_path_factory):
    """(folder, build summary) of the sample project, built once; copy it before changing it."""
    folder = tmp_path_factory.mktemp("sample") / "project"
    return folder, build_sample(folder)


@pytest.fixture(autouse=True)
def _garbage_on_gui_thread(request):
    """Tests with a Qt application collect garbage on the GUI thread, as the app does."""
    if "qapp" in request.fixturenames or "qtbot" in request.fixturenames:
        from clipscribe.ui import gc_guard
        gc_guard.install(request.getfixturevalue("qapp"))
    yield


def _outside(window):
    """Visible widgets of ``window`` that do not lie wholly inside it, as 'name: rect' lines.
    Widgets inside a scroll area's viewport are judged by the scroll area (they scroll)."""
    from PySide6.QtCore import QRect
    from PySide6.QtWidgets import QAbstractScrollArea, QWidget
    inside = window.rect()
    bad = []
    for wid in window.findChildren(QWidget):
        if not wid.isVisibleTo(window) or wid.isWindow():
            continue
        p, scrolled = wid.parentWidget(), False
        while p is not None and p is not window:
            if isinstance(p.parentWidget(), QAbstractScrollArea) and p is p.parentWidget().viewport():
                scrolled = True
                break
            p = p.parentWidget()
        if scrolled:
            continue
        r = QRect(wid.mapTo(window, wid.rect().topLeft()), wid.size())
        if not inside.contains(r):
            bad.append(f"{type(wid).__name__} {wid.objectName() or wid.accessibleName()}: {r}")
    return bad


@pytest.fixture
def outside():
    """``outside(window)``: its visible widgets that stick out of it (none wanted)."""
    return _outside


@pytest.fixture
def fit_check(qtbot, tmp_path):
    """``fit_check(window, width, height)``: place the window on a screen area of that size as
    the app does, lay it out, save a screenshot beside the test and return the widgets that
    stick out (none wanted)."""
    from PySide6.QtCore import QRect
    from PySide6.QtWidgets import QApplication

    from clipscribe.ui.focus import fit_window

    def check(window, width, height, name="window"):
        fit_window(window, QRect(0, 0, width, height))
        window.show()
        for _ in range(3):
            QApplication.processEvents()
        assert window.width() <= width and window.height() <= height, window.size()
        window.grab().save(str(tmp_path / f"{name}-{width}x{height}.png"))
        return _outside(window)
    return check
