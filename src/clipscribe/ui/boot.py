"""Before Qt starts: find missing system libraries and name the Debian/Ubuntu package to
install, instead of letting Qt abort with a traceback or a core dump."""

from __future__ import annotations

import ctypes
import os
import sys
from pathlib import Path

ORGANISATION = "clipscribe"      # QSettings names of the workbench; APPLICATION is also the
APPLICATION = "clipscribe"       # X11 window class, matched by StartupWMClass in clipscribe.desktop
LAST_PROJECT_KEY = "lastProject"  # the folder of the project the workbench showed last
RECENT_KEY = "recentProjects"     # folders of the projects shown lately, newest first
RECENT_MAX = 8

# shared library -> Debian/Ubuntu package that provides it
LIBRARIES = {
    "libGL.so.1": "libgl1",
    "libEGL.so.1": "libegl1",
    "libfontconfig.so.1": "libfontconfig1",
    "libxkbcommon.so.0": "libxkbcommon0",
    "libglib-2.0.so.0": "libglib2.0-0",
    "libdbus-1.so.3": "libdbus-1-3",
}
# needed only by the X11 (xcb) platform plugin
XCB_LIBRARIES = {
    "libxkbcommon-x11.so.0": "libxkbcommon-x11-0",
    "libxcb-cursor.so.0": "libxcb-cursor0",
    "libxcb-icccm.so.4": "libxcb-icccm4",
    "libxcb-keysyms.so.1": "libxcb-keysyms1",
    "libxcb-shape.so.0": "libxcb-shape0",
    "libxcb-render-util.so.0": "libxcb-render-util0",
    "libxcb-image.so.0": "libxcb-image0",
    "libxcb-randr.so.0": "libxcb-randr0",
    "libX11-xcb.so.1": "libx11-xcb1",
}


def missing_packages(libraries: dict[str, str]) -> list[str]:
    missing = []
    for lib, pkg in libraries.items():
        try:
            ctypes.CDLL(lib)
        except OSError:
            missing.append(pkg)
    return missing


def check_qt_runtime(*, screenshot: bool = False) -> str | None:
    """One line saying what to install or set, or None when Qt can start."""
    if os.name != "posix" or not os.path.exists("/proc"):
        return None  # the checks below are for Linux
    platform = os.environ.get("QT_QPA_PLATFORM", "")
    if screenshot and not platform:
        os.environ["QT_QPA_PLATFORM"] = platform = "offscreen"
    libs = dict(LIBRARIES)
    if not platform and not os.environ.get("WAYLAND_DISPLAY"):
        if not os.environ.get("DISPLAY"):
            return ("no display found: run inside a desktop session, under Xvfb "
                    "(xvfb-run clipscribe open ...), or add --screenshot FILE.png")
        libs.update(XCB_LIBRARIES)
    elif platform.startswith("xcb"):
        libs.update(XCB_LIBRARIES)
    missing = missing_packages(libs)
    if missing:
        return ("Qt needs system libraries that are missing; on Debian/Ubuntu run: "
                f"sudo apt-get install {' '.join(missing)}")
    return None


#: (PySide6 version, the Python versions it fails on, what goes wrong). 6.12.0's bindings give up
#: one reference to ``None`` on every wrapped call that returns nothing (``QPainter.setPen``,
#: ``QPainterPath.lineTo``, ...); Python before 3.12 counts references to ``None`` and aborts
#: ("Fatal Python error: none_dealloc") once the count reaches zero, seconds into painting.
KNOWN_BAD_BINDINGS = (
    ("6.12.0", (3, 12), "loses a reference to None on every call that returns nothing"),
)
PROBE_CALLS = 64


def none_references_lost(calls: int = PROBE_CALLS) -> int:
    """How many references to ``None`` ``calls`` void Qt calls give up (0 when sound).

    Measured, not looked up, so a faulty build we have not heard of is caught too. Only
    meaningful before Python 3.12; from 3.12 ``None`` is immortal and its count never moves."""
    from PySide6.QtGui import QPainterPath
    path = QPainterPath()
    before = sys.getrefcount(None)
    for i in range(calls):
        path.lineTo(i, i)
    return max(0, before - sys.getrefcount(None))


def check_bindings() -> str | None:
    """One line naming a Python/PySide6 pairing that would crash the window, or None."""
    try:
        import PySide6
    except ImportError:
        return "PySide6 is not installed: pip install 'PySide6-Essentials!=6.12.0'"
    version = PySide6.__version__
    for bad, fixed_in, what in KNOWN_BAD_BINDINGS:
        if version == bad and sys.version_info[:2] < fixed_in:
            break
    else:
        what = None
    if what is None and sys.version_info[:2] < (3, 12) and none_references_lost() >= PROBE_CALLS // 2:
        what = "loses references to None"
    if what is None:
        return None
    py = ".".join(map(str, sys.version_info[:3]))
    return (f"PySide6 {version} {what}, and Python {py} would abort a few seconds into use "
            f"(none_dealloc); install another version: pip install 'PySide6-Essentials!={version}'")


def last_project() -> str | None:
    """The folder of the project the workbench showed last (from the person's QSettings), or
    None when it never showed one. Needs only QtCore: no display, no QApplication."""
    try:
        from PySide6.QtCore import QCoreApplication, QSettings
    except ImportError:
        return None
    QCoreApplication.setOrganizationName(ORGANISATION)
    QCoreApplication.setApplicationName(APPLICATION)
    value = QSettings().value(LAST_PROJECT_KEY, None)
    return str(value) if value else None


def remember_project(settings, folder) -> None:
    """Note ``folder`` as the project shown last and at the head of the recent list."""
    folder = str(Path(folder).resolve())
    settings.setValue(LAST_PROJECT_KEY, folder)
    recent = [f for f in _as_list(settings.value(RECENT_KEY, [])) if f != folder]
    settings.setValue(RECENT_KEY, [folder, *recent][:RECENT_MAX])


def recent_projects(settings) -> list[Path]:
    """The recent project folders that still hold a project, newest first."""
    from ..schema.settings import SETTINGS_FILE
    folders = [Path(f) for f in _as_list(settings.value(RECENT_KEY, []))]
    return [f for f in folders if (f / SETTINGS_FILE).is_file()]


def _as_list(value) -> list[str]:
    # QSettings hands back a one-element list as a plain string on some back ends
    if value is None:
        return []
    return [value] if isinstance(value, str) else [str(v) for v in value]
