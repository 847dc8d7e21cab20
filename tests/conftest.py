"""The one shared fixture module: Qt offscreen, caches and Qt settings in a throwaway home
(never the user's), generated videos, the sample project (built once per run, copied per test)
and workbench windows. Directory conftest files only add what their tests alone need."""

import os
import shutil
import tempfile

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # before Qt is imported anywhere
_HOME = tempfile.mkdtemp(prefix="clipscribe-tests-")
os.environ["XDG_CACHE_HOME"] = os.path.join(_HOME, "cache")    # frame indexes, job results
os.environ["XDG_CONFIG_HOME"] = os.path.join(_HOME, "config")  # QSettings of subprocesses

import pytest  # noqa: E402
from PySide6.QtCore import QSettings  # noqa: E402
from videos import write_video  # noqa: E402

from clipscribe import Project  # noqa: E402
from clipscribe.sample import build_sample  # noqa: E402

QSettings.setDefaultFormat(QSettings.Format.IniFormat)
QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope,
                  os.path.join(_HOME, "config"))


@pytest.fixture
def make_video():
    """``make_video(path, n=12, size=(64, 48), seed=0)``: a small mp4v test video at ``path``."""
    return write_video


@pytest.fixture(scope="session")
def sample_build(tmp_path_factory):
    """(folder, build summary) of the sample project, built once; copy it before changing it."""
    folder = tmp_path_factory.mktemp("sample") / "project"
    return folder, build_sample(folder)


@pytest.fixture(scope="session")
def sample_master(sample_build):
    """The sample project folder built for this run: copy it (``sample_copy``) to change it."""
    return sample_build[0]


@pytest.fixture(scope="session")
def sample_lead(sample_build) -> str:
    """The name of the sample project's lead (its local user)."""
    return sample_build[1]["lead"]


@pytest.fixture
def sample_copy(sample_master, tmp_path):
    """A fresh copy of the sample project folder for one test."""
    dst = tmp_path / "project"
    shutil.copytree(sample_master, dst)
    return dst


@pytest.fixture
def settings(tmp_path):
    """Window settings in a file of this test (never the user's)."""
    s = QSettings(str(tmp_path / "workbench.ini"), QSettings.Format.IniFormat)
    yield s
    s.sync()


@pytest.fixture
def open_window(qtbot, settings):
    """``open_window(folder, user, view="work", settings=…, opener=…)``: the workbench on a
    project folder as ``user``, shown; every window and project is closed afterwards.
    ``opener(folder, user)`` opens the project (default ``Project.open``); when it gives None
    (a login was cancelled) so does ``open_window``: ``(None, None)``."""
    from clipscribe.ui.app import application
    from clipscribe.ui.workbench.main_window import MainWindow
    made = []

    def make(folder, user, *, opener=None, **kw):
        application()
        p = (opener or (lambda f, u: Project.open(f, user=u)))(folder, user)
        if p is None:
            return None, None
        w = MainWindow(p, settings=kw.pop("settings", settings), **kw)
        qtbot.addWidget(w)
        w.show()
        made.append((w, p))
        return w, p

    yield make
    for w, p in made:
        if w.isVisible():
            # a test that failed with a caption conflict still open must not wait for an
            # answer to the "settle conflicts" box at teardown: the run would hang, not fail
            w.settle_conflicts = lambda: True
            w.close()
        p.close()


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
