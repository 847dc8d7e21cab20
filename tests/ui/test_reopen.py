"""``clipscribe open`` with no folder reopens the project the workbench showed last, or starts
on the start window when there is none (or it is gone)."""

import os
import subprocess
import sys

from PySide6.QtCore import QSettings
from PySide6.QtGui import QImage

from clipscribe.ui.boot import APPLICATION, LAST_PROJECT_KEY, ORGANISATION

OPEN = "import sys; from clipscribe.cli import main; sys.exit(main(['open', *sys.argv[1:]]))"
# the folder run() was given, instead of a window
OPEN_SPY = ("import sys; import clipscribe.ui.app as a; "
            "a.run = lambda folder, **kw: print('opening', folder, kw.get('note', '')) or 0; "
            "from clipscribe.cli import main; sys.exit(main(['open', *sys.argv[1:]]))")


def _run(code, config, *args):
    env = dict(os.environ, XDG_CONFIG_HOME=str(config), QT_QPA_PLATFORM="offscreen")
    return subprocess.run([sys.executable, "-c", code, *map(str, args)], capture_output=True,
                          text=True, timeout=90, env=env)


def _remember(config, folder):
    """Write the key where a subprocess's QSettings() looks (XDG_CONFIG_HOME on Linux)."""
    s = QSettings(str(config / ORGANISATION / f"{APPLICATION}.conf"), QSettings.Format.IniFormat)
    s.setValue(LAST_PROJECT_KEY, str(folder))
    s.sync()


def test_no_folder_and_none_before_starts_on_the_start_window(tmp_path):
    spied = _run(OPEN_SPY, tmp_path / "config")
    assert spied.returncode == 0, spied.stderr
    assert spied.stdout.strip() == "opening None"


def test_a_remembered_project_that_is_gone_is_said_on_the_start_window(tmp_path):
    config = tmp_path / "config"
    _remember(config, tmp_path / "moved-away")
    spied = _run(OPEN_SPY, config)
    assert spied.stdout.strip() == (f"opening None The project opened last, "
                                    f"{tmp_path / 'moved-away'}, is no longer there.")


def test_screenshot_with_no_folder_and_none_before_is_one_line_and_exit_1(tmp_path):
    run = _run(OPEN, tmp_path / "config", "--screenshot", tmp_path / "x.png")
    assert run.returncode == 1
    assert run.stderr.strip().splitlines() == [
        "clipscribe: error: no project given and none opened before"]


def test_the_workbench_remembers_the_project_it_shows(qtbot, sample, open_window, settings):
    w, _ = open_window(sample, "annotator-1")
    assert settings.value(LAST_PROJECT_KEY) == str(sample.resolve())


def test_no_folder_opens_the_remembered_project(sample, tmp_path):
    config = tmp_path / "config"
    _remember(config, sample.resolve())
    spied = _run(OPEN_SPY, config, "--user", "annotator-1")
    assert spied.returncode == 0, spied.stderr
    assert spied.stdout.strip() == f"opening {sample.resolve()}"
    given = _run(OPEN_SPY, config, tmp_path / "elsewhere")           # a folder given wins
    assert given.stdout.strip() == f"opening {tmp_path / 'elsewhere'}"
    out = tmp_path / "shot.png"                                       # and for real
    run = _run(OPEN, config, "--user", "annotator-1", "--screenshot", out)
    assert run.returncode == 0, run.stderr
    assert not QImage(str(out)).isNull()


def test_no_command_without_a_terminal_opens_the_window(tmp_path):
    # a double-click in a file manager: no arguments, stdout not a terminal (here: a pipe)
    code = OPEN_SPY.replace("main(['open', *sys.argv[1:]])", "main([])")
    spied = _run(code, tmp_path / "config")
    assert spied.returncode == 0, spied.stderr
    assert spied.stdout.strip() == "opening None"
