"""The files packaging/ ships beside the app: icon renderings, the desktop entry, the spec's
data list. Fast checks; the built app itself is checked by test_built_app.py."""

import configparser
import importlib.util
import shutil
import struct
import subprocess
import sys
import tomllib
from pathlib import Path

import pytest
from PySide6.QtCore import QBuffer, QByteArray, QIODevice
from PySide6.QtGui import QImage, QImageReader

from clipscribe.ui.boot import APPLICATION

ROOT = Path(__file__).resolve().parents[2]
PACKAGING = ROOT / "packaging"


def _render_icons():
    spec = importlib.util.spec_from_file_location("render_icons", PACKAGING / "render_icons.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


render_icons = _render_icons()


def _image(data: bytes) -> QImage:
    img = QImage()
    assert img.loadFromData(data, "PNG")
    return img.convertToFormat(QImage.Format.Format_ARGB32)


def _max_channel_difference(a: QImage, b: QImage) -> int:
    assert a.size() == b.size()
    pa, pb = a.constBits(), b.constBits()
    return max(abs(x - y) for x, y in zip(bytes(pa), bytes(pb)))


@pytest.mark.parametrize("size", render_icons.THEME_SIZES)
def test_theme_pngs_match_a_fresh_render_of_the_svg(qapp, size):
    """Someone who edits the SVG must rerun packaging/render_icons.py. Compared by pixels with a
    small tolerance, not bytes, so another Qt's PNG encoder or antialiasing does not fail it."""
    shipped = PACKAGING / "icons" / "hicolor" / f"{size}x{size}" / "apps" / "clipscribe.png"
    img = _image(shipped.read_bytes())
    assert (img.width(), img.height()) == (size, size)
    assert _max_channel_difference(img, _image(render_icons.render_png(size))) <= 24


def _read_all(path: Path, fmt: bytes) -> list[tuple[int, int]]:
    """Sizes of every picture in a multi-image file, as Qt's own image plugin reads them."""
    data = QByteArray(path.read_bytes())
    buf = QBuffer(data)
    buf.open(QIODevice.OpenModeFlag.ReadOnly)
    reader = QImageReader(buf, fmt)
    sizes = []
    for i in range(reader.imageCount()):
        reader.jumpToImage(i)
        img = reader.read()
        assert not img.isNull(), reader.errorString()
        sizes.append((img.width(), img.height()))
    return sizes


def test_ico_holds_every_size_and_qt_reads_it(qapp):
    # Qt's ICO plugin (qico) is an independent reader of Microsoft's ICONDIR layout
    path = PACKAGING / "icons" / "clipscribe.ico"
    assert sorted(_read_all(path, b"ico")) == [(s, s) for s in render_icons.ICO_SIZES]
    reserved, kind, count = struct.unpack("<HHH", path.read_bytes()[:6])
    assert (reserved, kind, count) == (0, 1, len(render_icons.ICO_SIZES))


def test_icns_blocks_are_pngs_of_the_declared_sizes():
    # Apple's ICNS layout: b"icns", total length, then (type, length, data) blocks, big-endian
    data = (PACKAGING / "icons" / "clipscribe.icns").read_bytes()
    assert data[:4] == b"icns" and struct.unpack(">I", data[4:8])[0] == len(data)
    seen, at = {}, 8
    while at < len(data):
        kind, length = data[at:at + 4], struct.unpack(">I", data[at + 4:at + 8])[0]
        blob = data[at + 8:at + length]
        assert blob[:8] == b"\x89PNG\r\n\x1a\n"
        seen[kind] = struct.unpack(">II", blob[16:24])
        at += length
    assert at == len(data)
    assert seen == {k: (s, s) for k, s in render_icons.ICNS_TYPES.items()}


def test_render_icons_check_reports_a_stale_file(tmp_path, monkeypatch):
    monkeypatch.setattr(render_icons, "ICONS", tmp_path)
    assert render_icons.main(["--check"]) == 1   # nothing there yet
    assert render_icons.main([]) == 0            # writes them
    assert render_icons.main(["--check"]) == 0
    (tmp_path / "clipscribe.ico").write_bytes(b"old")
    assert render_icons.main(["--check"]) == 1


def _desktop() -> configparser.SectionProxy:
    cp = configparser.ConfigParser(interpolation=None)
    cp.optionxform = str  # keys are case-sensitive in desktop entries
    cp.read(PACKAGING / "linux" / "clipscribe.desktop", encoding="utf-8")
    return cp["Desktop Entry"]


def test_desktop_entry_names_the_program_icon_and_window_class():
    entry = _desktop()
    assert entry["Type"] == "Application"
    assert entry["Exec"] == "clipscribe open %f"  # install.sh rewrites it to the full path
    assert entry["Icon"] == "clipscribe"          # the PNGs' file name in the icon theme
    assert entry["StartupWMClass"] == APPLICATION  # Qt's X11 window class
    assert entry["Terminal"] == "false"


@pytest.mark.skipif(shutil.which("desktop-file-validate") is None,
                    reason="desktop-file-validate not installed (Debian: desktop-file-utils)")
def test_desktop_entry_passes_the_freedesktop_validator():
    # desktop-file-validate implements the freedesktop.org Desktop Entry Specification
    run = subprocess.run(["desktop-file-validate", str(PACKAGING / "linux" / "clipscribe.desktop")],
                         capture_output=True, text=True)
    assert run.returncode == 0 and not run.stdout.strip(), run.stdout + run.stderr


def test_the_spec_bundles_what_the_package_ships_as_data():
    """What pyproject.toml ships as package data (Alembic's scripts, the icon) is collected by
    the PyInstaller spec too; a pattern added to one and not the other fails here."""
    with open(ROOT / "pyproject.toml", "rb") as fh:
        shipped = set(tomllib.load(fh)["tool"]["setuptools"]["package-data"]["clipscribe"])
    spec = (PACKAGING / "clipscribe.spec").read_text()
    missing = [pattern for pattern in shipped if f'"{pattern}"' not in spec]
    assert not missing, f"package data the spec does not collect: {missing}"
    package = ROOT / "src" / "clipscribe"
    for pattern in shipped:
        assert list(package.glob(pattern)), f"package-data pattern {pattern!r} matches nothing"


def test_install_script_is_posix_sh():
    sh = shutil.which("dash") or shutil.which("sh")
    run = subprocess.run([sh, "-n", str(PACKAGING / "linux" / "install.sh")], capture_output=True, text=True)
    assert run.returncode == 0, run.stderr
    help_ = subprocess.run([sh, str(PACKAGING / "linux" / "install.sh"), "--help"],
                           capture_output=True, text=True)
    assert help_.returncode == 0 and "--uninstall" in help_.stdout
    bad = subprocess.run([sh, str(PACKAGING / "linux" / "install.sh"), "--frobnicate"],
                         capture_output=True, text=True)
    assert bad.returncode == 2 and "unknown option" in bad.stderr


def test_entry_point_is_the_cli_main():
    run = subprocess.run([sys.executable, str(PACKAGING / "entry.py"), "--version"],
                         capture_output=True, text=True)
    assert run.returncode == 0 and run.stdout.startswith("clipscribe ")
