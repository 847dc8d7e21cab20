#!/usr/bin/env bash
# Build the app, then use the built binary the way a person would, far from the source tree
# and with no Python environment around it:
#
#     packaging/smoke.sh              # build (packaging/build.sh), then check
#     packaging/smoke.sh --no-build   # check what is already in dist/
#
# Checks: --version; `sample` builds the sample project; `open --screenshot` draws the work
# view and the review desk to PNG files (exit 0, 1440x900, not blank); `agreement --json` and
# a dry-run `export` answer; the Linux archive installs into a scratch prefix with install.sh,
# the installed link starts, the desktop entry validates (when desktop-file-validate is
# installed), and --uninstall takes everything out again. Exit status 0 means all passed.
# CLIPSCRIBE_DIST=... checks (and builds into) another folder than dist/.
set -euo pipefail
ROOT="$(cd "$(dirname "$0")/.." && pwd)"
DIST="${CLIPSCRIBE_DIST:-$ROOT/dist}"
export CLIPSCRIBE_DIST="$DIST"
if [ "${1:-}" != "--no-build" ]; then
    "$ROOT/packaging/build.sh"
fi
APP="$DIST/clipscribe/clipscribe"
[ -x "$APP" ] || { echo "smoke: $APP not built" >&2; exit 1; }
WORK="$(mktemp -d -t clipscribe-smoke.XXXXXX)"
trap 'rm -rf "$WORK"' EXIT
cd "$WORK"
# a bare environment: no virtualenv, no PYTHONPATH, a fresh home, Qt drawing offscreen
BARE=(env -i "PATH=/usr/bin:/bin" "HOME=$WORK/home" "LANG=C.UTF-8" "QT_QPA_PLATFORM=offscreen"
      "XDG_CONFIG_HOME=$WORK/home/.config" "XDG_CACHE_HOME=$WORK/home/.cache"
      "XDG_DATA_HOME=$WORK/home/.local/share" "XDG_RUNTIME_DIR=$WORK/run")
mkdir -p "$WORK/home" "$WORK/run" && chmod 700 "$WORK/run"
pass() { printf 'ok   %s\n' "$*"; }
fail() { printf 'FAIL %s\n' "$*" >&2; exit 1; }
secs() { python3 -c 'import sys,time; print(f"{time.time()-float(sys.argv[1]):.1f} s")' "$1"; }

png_ok() {  # PNG signature, the expected size from IHDR, and more than a blank image's bytes
    python3 - "$1" <<'PY'
import struct, sys
data = open(sys.argv[1], "rb").read()
assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG"
w, h = struct.unpack(">II", data[16:24])
assert (w, h) == (1440, 900), f"{w}x{h}, expected 1440x900"
assert len(data) > 60_000, f"only {len(data)} bytes: blank?"
print(f"{w}x{h}, {len(data) // 1024} KiB")
PY
}

for data in clipscribe/ui/assets/clipscribe.svg clipscribe/store/migrations/env.py; do
    [ -f "$DIST/clipscribe/_internal/$data" ] || fail "not bundled: $data"
done
out="$("${BARE[@]}" "$APP" --version)" && [[ "$out" == clipscribe\ * ]] || fail "--version: $out"
pass "--version: $out"
t=$(date +%s.%N)
"${BARE[@]}" "$APP" sample "$WORK/sample" >/dev/null || fail "sample"
pass "sample project built ($(secs "$t"))"
t=$(date +%s.%N)
"${BARE[@]}" "$APP" open "$WORK/sample" --screenshot "$WORK/work.png" || fail "open --screenshot"
pass "work view drawn: $(png_ok "$WORK/work.png") ($(secs "$t"))"
"${BARE[@]}" "$APP" open "$WORK/sample" --view review --screenshot "$WORK/review.png" \
    || fail "open --view review --screenshot"
pass "review desk drawn: $(png_ok "$WORK/review.png")"
"${BARE[@]}" "$APP" agreement "$WORK/sample" --json >"$WORK/agreement.json" || fail "agreement"
python3 -c 'import json,sys; r=json.load(open(sys.argv[1])); assert r, "empty"' "$WORK/agreement.json" \
    || fail "agreement --json is not JSON"
pass "agreement --json"
"${BARE[@]}" "$APP" export "$WORK/sample" "$WORK/export" --dry-run >"$WORK/export.txt" || fail "export --dry-run"
pass "export --dry-run: $(head -1 "$WORK/export.txt")"

ARCHIVE="$(ls "$DIST"/clipscribe-*-linux-*.tar.gz 2>/dev/null | head -1)"
if [ -n "$ARCHIVE" ]; then
    tar -C "$WORK" -xzf "$ARCHIVE"
    UNPACKED="$(ls -d "$WORK"/clipscribe-*-linux-*/)"
    PREFIX="$WORK/prefix"
    "${BARE[@]}" sh "$UNPACKED/install.sh" --prefix "$PREFIX" >/dev/null || fail "install.sh"
    out="$("${BARE[@]}" "$PREFIX/bin/clipscribe" --version)" || fail "installed link"
    pass "install.sh --prefix: $PREFIX/bin/clipscribe --version -> $out"
    DESKTOP="$PREFIX/share/applications/clipscribe.desktop"
    grep -q "^Exec=$PREFIX/bin/clipscribe open %f\$" "$DESKTOP" || fail "desktop entry Exec"
    [ -f "$PREFIX/share/icons/hicolor/256x256/apps/clipscribe.png" ] || fail "icon not installed"
    if command -v desktop-file-validate >/dev/null; then
        desktop-file-validate "$DESKTOP" || fail "desktop-file-validate"
        pass "desktop entry validates"
    else
        echo "skip desktop-file-validate (not installed: apt-get install desktop-file-utils)"
    fi
    "${BARE[@]}" sh "$UNPACKED/install.sh" --prefix "$PREFIX" --uninstall >/dev/null || fail "uninstall"
    left="$(find "$PREFIX" -name 'clipscribe*')"
    [ -z "$left" ] || fail "left after --uninstall: $left"
    pass "install.sh --uninstall leaves nothing"
fi
echo "smoke: all passed ($(du -sh "$DIST/clipscribe" | cut -f1) app folder)"
