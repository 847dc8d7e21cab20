"""Review tests run headless on copies of the sample project (its local user is the lead)."""

import shutil

import pytest
from PySide6.QtCore import QSettings

from clipscribe import Project


@pytest.fixture(scope="session")
def sample_master(sample_build):
    folder, out = sample_build
    return folder, out["lead"]


@pytest.fixture
def sample(sample_master, tmp_path):
    """(fresh copy of the sample folder, name of its lead)."""
    src, lead = sample_master
    dst = tmp_path / "project"
    shutil.copytree(src, dst)
    return dst, lead


@pytest.fixture
def window(qtbot, sample, tmp_path):
    """The workbench window with the review page installed, opened as ``user`` (default lead)."""
    from clipscribe.ui.app import application, open_window
    made = []

    def make(user=None, view="review"):
        application()
        folder, lead = sample
        p = Project.open(folder, user=user or lead)
        w = open_window(p, view=view, settings=QSettings(str(tmp_path / "w.ini"),
                                                        QSettings.Format.IniFormat))
        qtbot.addWidget(w)
        w.show()
        made.append((w, p))
        desk = getattr(w.review_desk, "desk", None)
        if desk is not None:  # the queue is ranked in the background
            qtbot.waitUntil(lambda: desk.ranking is None and desk.report is not None,
                            timeout=20000)
        return w, p

    yield make
    for w, p in made:
        if w.isVisible():
            w.close()
        p.close()
