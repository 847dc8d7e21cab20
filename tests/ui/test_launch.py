"""A launch puts a window on screen before the project and the workbench are loaded."""

import subprocess
import sys

from clipscribe.ui import launch


def test_the_opening_window_needs_only_qt_and_goes_when_the_workbench_shows(qtbot, sample, monkeypatch,
                                                                            tmp_path):
    # in a fresh interpreter: showing the indicator loads no database, video or numeric module
    code = ("import sys; from clipscribe.ui.launch import show_opening; show_opening(sys.argv[1]); "
            "heavy = [m for m in ('sqlalchemy', 'cv2', 'numpy', 'clipscribe.project') "
            "if m in sys.modules]; print(heavy)")
    out = subprocess.run([sys.executable, "-c", code, str(sample)], capture_output=True, text=True,
                         timeout=60, env={**__import__("os").environ, "QT_QPA_PLATFORM": "offscreen"})
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[]"
    # in this process: shown, then dismissed by the workbench's first show
    launch.show_opening(sample)
    assert launch.showing()
    w = launch._shown[0]
    assert w.isVisible() and w.windowTitle().startswith("clipscribe — opening project")
    from PySide6.QtCore import QSettings
    from PySide6.QtWidgets import QApplication

    from clipscribe.ui import app as app_module
    from clipscribe.ui.workbench.main_window import MainWindow
    seen = []

    def exec_(self):  # instead of running: note what is on screen, then close the workbench
        seen.append((launch.showing(), w.isVisible()))
        for top in QApplication.topLevelWidgets():
            if isinstance(top, MainWindow) and top.isVisible():
                top.close()
        return 0
    monkeypatch.setattr(app_module.QApplication, "exec", exec_)
    monkeypatch.setattr(app_module, "QSettings",
                        lambda *a, **k: QSettings(str(tmp_path / "s.ini"), QSettings.Format.IniFormat))
    assert app_module.run(sample, user="annotator-3") == 0
    assert seen == [(False, False)]                             # gone once the workbench showed
