#!/usr/bin/env bash
# Build clipscribe for people who just want the app, with one command:
#
#     packaging/build.sh
#
# It makes its own virtual environment (build/packaging-venv), so the developer's .venv is left
# alone, and writes into dist/:
#   clipscribe-<version>-py3-none-any.whl, clipscribe-<version>.tar.gz   (checked with twine)
#   clipscribe/                        the one-folder app: dist/clipscribe/clipscribe
#   clipscribe-<version>-linux-<arch>.tar.gz   that folder plus the desktop entry, the icons and
#                                       install.sh, ready to hand to annotators
# Needs Python 3.11+ with venv and network access to PyPI (for the build tools and the
# dependencies); nothing else. PYTHON=... picks the interpreter; CLIPSCRIBE_DIST=... writes
# somewhere other than dist/ (the scratch files stay in build/).
set -euo pipefail
ROOT="$(cd "$(dirname "$0")/.." && pwd)"
cd "$ROOT"
PYTHON="${PYTHON:-python3}"
VENV="$ROOT/build/packaging-venv"
DIST="${CLIPSCRIBE_DIST:-$ROOT/dist}"
step() { printf '\n== %s\n' "$*"; }

step "build tools in $VENV"
if [ ! -x "$VENV/bin/python" ]; then
    "$PYTHON" -m venv "$VENV"
fi
"$VENV/bin/python" -m pip install --quiet --upgrade pip
"$VENV/bin/python" -m pip install --quiet -r packaging/requirements-build.txt

step "wheel and sdist"
mkdir -p "$DIST"
# only what this script writes: CLIPSCRIBE_DIST may well be a folder holding other things
rm -rf "$DIST/clipscribe" "$DIST"/clipscribe-*.whl "$DIST"/clipscribe-*.tar.gz build/pyinstaller
"$VENV/bin/python" -m build --outdir "$DIST" . >build/python-build.log 2>&1 \
    || { tail -40 build/python-build.log; exit 1; }
"$VENV/bin/python" -m twine check --strict "$DIST"/*.whl "$DIST"/*.tar.gz
WHEEL="$(ls "$DIST"/clipscribe-*.whl)"
VERSION="$(basename "$WHEEL" | cut -d- -f2)"

step "install the wheel (not the source tree) into the build environment"
"$VENV/bin/python" -m pip install --quiet "$WHEEL"
"$VENV/bin/python" -m pip install --quiet --force-reinstall --no-deps "$WHEEL"  # same version, new build

step "one-folder app with PyInstaller"
# run from build/ so that the source tree's src/ can never shadow the installed wheel
(cd build && "$VENV/bin/python" -m PyInstaller --noconfirm --clean --log-level WARN \
    --distpath "$DIST" --workpath "$ROOT/build/pyinstaller" "$ROOT/packaging/clipscribe.spec")

if [ "$(uname -s)" = "Linux" ]; then
    step "Linux archive"
    ARCH="$(uname -m)"
    NAME="clipscribe-$VERSION-linux-$ARCH"
    STAGE="$ROOT/build/$NAME"
    rm -rf "$STAGE"
    mkdir -p "$STAGE"
    cp -a "$DIST/clipscribe" "$STAGE/app"
    cp packaging/linux/clipscribe.desktop packaging/linux/install.sh "$STAGE/"
    cp -a packaging/icons/hicolor "$STAGE/icons"
    cp packaging/linux/README.txt "$STAGE/README.txt"
    tar -C "$ROOT/build" -czf "$DIST/$NAME.tar.gz" "$NAME"
    rm -rf "$STAGE"
fi

step "done"
du -sh "$DIST/clipscribe" | sed 's/^/app folder: /'
ls -1 "$DIST"
