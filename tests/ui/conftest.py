"""UI tests: headless, on copies of the sample project (tests/conftest.py sets Qt up)."""

import shutil

import pytest
from PySide6.QtCore import QSettings

from clipscribe import Project


@pytest.fixture(scope="session")
def sample_master(sample_build):
    return sample_build[0]


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
    from clipscribe.ui.workbench.main_window import MainWindow
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
            # a test that failed with a caption conflict still open must not wait for an
            # answer to the "settle conflicts" box at teardown: the run would hang, not fail
            w.settle_conflicts = lambda: True
            w.close()
        p.close()


def wait_frame(qtbot, w, frame=None, timeout=5000):
    """Wait until the viewer shows ``frame`` (or any frame)."""
    qtbot.waitUntil(lambda: w.viewer.frame_number is not None and
                    (frame is None or w.viewer.frame_number == frame), timeout=timeout)
