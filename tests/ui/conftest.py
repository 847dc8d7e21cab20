"""UI tests run headless, with QSettings and caches in temporary folders."""

import os
import shutil
import tempfile

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # before Qt is imported anywhere
_HOME = tempfile.mkdtemp(prefix="clipscribe-ui-tests-")
os.environ["XDG_CACHE_HOME"] = os.path.join(_HOME, "cache")     # media job caches
os.environ["XDG_CONFIG_HOME"] = os.path.join(_HOME, "config")   # QSettings of subprocesses

import pytest  # noqa: E402
from PySide6.QtCore import QSettings  # noqa: E402

from clipscribe import Project  # noqa: E402
from clipscribe.sample.build import build_sample  # noqa: E402

QSettings.setDefaultFormat(QSettings.Format.IniFormat)
QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope,
                  os.path.join(_HOME, "config"))


@pytest.fixture(scope="session")
def sample_master(tmp_path_factory):
    folder = tmp_path_factory.mktemp("sample") / "project"
    build_sample(folder)
    return folder


@pytest.fixture
def sample(sample_master, tmp_path):
    """A fresh copy of the sample project folder for one test."""
    dst = tmp_path / "project"
    shutil.copytree(sample_master, dst)
    return dst


@pytest.fixture
def settings(tmp_path):
    s = QSettings(str(tmp_path / "workbench.ini"), QSettings.Format.IniFormat)
    yield s
    s.sync()


@pytest.fixture
def open_window(qtbot, settings):
    """Open the workbench on a project folder as a user; closes everything afterwards."""
    from clipscribe.ui.app import application
    from clipscribe.ui.main_window import MainWindow
    made = []

    def make(folder, user, **kw):
        application()
        p = Project.open(folder, user=user)
        w = MainWindow(p, settings=kw.pop("settings", settings), **kw)
        qtbot.addWidget(w)
        w.show()
        made.append((w, p))
        return w, p

    yield make
    for w, p in made:
        if w.isVisible():
            w.close()
        p.close()


def wait_frame(qtbot, w, frame=None, timeout=5000):
    """Wait until the viewer shows ``frame`` (or any frame)."""
    qtbot.waitUntil(lambda: w.viewer.frame_number is not None and
                    (frame is None or w.viewer.frame_number == frame), timeout=timeout)
