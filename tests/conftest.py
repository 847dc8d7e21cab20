"""Suite-wide setup: Qt offscreen, caches and Qt settings in a throwaway home, never the
user's; the sample project built once per run."""

import os
import tempfile

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")  # before Qt is imported anywhere
_HOME = tempfile.mkdtemp(prefix="clipscribe-tests-")
os.environ["XDG_CACHE_HOME"] = os.path.join(_HOME, "cache")    # frame indexes, job results
os.environ["XDG_CONFIG_HOME"] = os.path.join(_HOME, "config")  # QSettings of subprocesses

import pytest  # noqa: E402
from PySide6.QtCore import QSettings  # noqa: E402

from clipscribe.sample import build_sample  # noqa: E402

QSettings.setDefaultFormat(QSettings.Format.IniFormat)
QSettings.setPath(QSettings.Format.IniFormat, QSettings.Scope.UserScope,
                  os.path.join(_HOME, "config"))


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
