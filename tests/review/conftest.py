"""Review tests run headless on copies of the sample project (its local user is the lead)."""

import os
import shutil
import tempfile

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
_HOME = tempfile.mkdtemp(prefix="clipscribe-review-tests-")
os.environ["XDG_CACHE_HOME"] = os.path.join(_HOME, "cache")
os.environ["XDG_CONFIG_HOME"] = os.path.join(_HOME, "config")

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
    out = build_sample(folder)
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
