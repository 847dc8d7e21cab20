"""Render the application icon from its SVG source into every file the packages need.

    python packaging/render_icons.py          # rewrite packaging/icons/ from the SVG
    python packaging/render_icons.py --check  # exit 1 when packaging/icons/ is out of date

The SVG ships inside the package (the window uses it), so it lives at
src/clipscribe/ui/assets/clipscribe.svg; this script writes:

- icons/hicolor/<N>x<N>/apps/clipscribe.png for the freedesktop icon theme (Linux menus);
- icons/clipscribe.ico (Windows; PNG entries at 16..256 px);
- icons/clipscribe.icns (macOS; PNG entries at 16..1024 px).

Qt renders the SVG; the ICO and ICNS containers are written here by hand because Qt's image
writers store one picture per file, and both formats are a short header and a table of PNG
blobs (ICO: Microsoft's ICONDIR layout, PNG entries allowed since Windows Vista; ICNS: Apple's
four-character-code blocks).
"""

from __future__ import annotations

import argparse
import os
import struct
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
SOURCE = HERE.parent / "src" / "clipscribe" / "ui" / "assets" / "clipscribe.svg"
ICONS = HERE / "icons"
THEME_SIZES = (16, 24, 32, 48, 64, 128, 256, 512)
ICO_SIZES = (16, 24, 32, 48, 64, 128, 256)
# ICNS block type -> pixel size (the PNG-carrying types)
ICNS_TYPES = {b"icp4": 16, b"icp5": 32, b"icp6": 64, b"ic07": 128, b"ic08": 256,
              b"ic09": 512, b"ic10": 1024}


def render_png(size: int, source: Path = SOURCE) -> bytes:
    """The icon drawn at ``size`` × ``size`` pixels, as PNG bytes."""
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtCore import QBuffer, QByteArray, QIODevice
    from PySide6.QtGui import QGuiApplication, QImage, QPainter
    from PySide6.QtSvg import QSvgRenderer

    if QGuiApplication.instance() is None:  # the SVG renderer's fonts and paint engine need one
        render_png.app = QGuiApplication([])
    renderer = QSvgRenderer(str(source))
    if not renderer.isValid():
        raise SystemExit(f"render_icons: {source} is not a valid SVG")
    image = QImage(size, size, QImage.Format.Format_ARGB32)
    image.fill(0)
    painter = QPainter(image)
    painter.setRenderHint(QPainter.RenderHint.Antialiasing)
    renderer.render(painter)
    painter.end()
    data = QByteArray()
    buf = QBuffer(data)
    buf.open(QIODevice.OpenModeFlag.WriteOnly)
    image.save(buf, "PNG")
    buf.close()
    return bytes(data)


def ico(pngs: dict[int, bytes]) -> bytes:
    """An ICO file holding one PNG entry per size (ICONDIR, then ICONDIRENTRY × n, then data)."""
    sizes = sorted(pngs)
    out = struct.pack("<HHH", 0, 1, len(sizes))
    offset = 6 + 16 * len(sizes)
    blobs = b""
    for s in sizes:
        data = pngs[s]
        dim = 0 if s >= 256 else s  # 0 means 256
        out += struct.pack("<BBBBHHII", dim, dim, 0, 0, 1, 32, len(data), offset + len(blobs))
        blobs += data
    return out + blobs


def icns(pngs: dict[bytes, bytes]) -> bytes:
    """An ICNS file: b'icns' + total length, then (type, length, PNG) blocks, big-endian."""
    body = b"".join(t + struct.pack(">I", 8 + len(d)) + d for t, d in pngs.items())
    return b"icns" + struct.pack(">I", 8 + len(body)) + body


def wanted_files(source: Path = SOURCE) -> dict[Path, bytes]:
    """Every file under icons/ and its expected content."""
    cache: dict[int, bytes] = {}

    def png(size: int) -> bytes:
        if size not in cache:
            cache[size] = render_png(size, source)
        return cache[size]

    files = {ICONS / "hicolor" / f"{s}x{s}" / "apps" / "clipscribe.png": png(s) for s in THEME_SIZES}
    files[ICONS / "clipscribe.ico"] = ico({s: png(s) for s in ICO_SIZES})
    files[ICONS / "clipscribe.icns"] = icns({t: png(s) for t, s in ICNS_TYPES.items()})
    return files


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--check", action="store_true",
                    help="only compare: exit 1 when a file under packaging/icons/ is missing or stale")
    args = ap.parse_args(argv)
    stale = []
    for path, data in wanted_files().items():
        if path.exists() and path.read_bytes() == data:
            continue
        stale.append(path)
        if not args.check:
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_bytes(data)
    for path in stale:
        print(("stale: " if args.check else "wrote ") + os.path.relpath(path, HERE.parent))
    return 1 if args.check and stale else 0


if __name__ == "__main__":
    sys.exit(main())
