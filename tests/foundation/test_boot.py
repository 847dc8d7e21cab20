"""`clipscribe open` names the Debian/Ubuntu package of a missing Qt library instead of crashing."""

from __future__ import annotations

import ctypes

from clipscribe.ui import boot


def test_missing_library_names_its_package(monkeypatch):
    real = ctypes.CDLL

    def fake(name, *a, **kw):
        if name in ("libEGL.so.1", "libxcb-cursor.so.0"):
            raise OSError(f"{name}: cannot open shared object file")
        return real(name, *a, **kw)

    monkeypatch.setattr(boot.ctypes, "CDLL", fake)
    monkeypatch.setenv("DISPLAY", ":0")
    monkeypatch.delenv("QT_QPA_PLATFORM", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    msg = boot.check_qt_runtime()
    assert msg is not None and "sudo apt-get install" in msg
    assert "libegl1" in msg and "libxcb-cursor0" in msg


def test_no_display_is_one_clear_line(monkeypatch):
    monkeypatch.delenv("DISPLAY", raising=False)
    monkeypatch.delenv("WAYLAND_DISPLAY", raising=False)
    monkeypatch.delenv("QT_QPA_PLATFORM", raising=False)
    assert "no display found" in boot.check_qt_runtime()


def test_offscreen_with_libraries_present_is_fine(monkeypatch):
    monkeypatch.setenv("QT_QPA_PLATFORM", "offscreen")
    assert boot.check_qt_runtime() is None
