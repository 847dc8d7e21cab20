#!/bin/sh
# Install the clipscribe app from this unpacked archive, for you alone (default) or for everyone:
#
#     ./install.sh                         # into ~/.local (no root needed)
#     sudo ./install.sh --prefix /usr/local  # for every account on this machine
#     ./install.sh --uninstall [--prefix P]  # take it out again (your projects are not touched)
#
# What it writes: PREFIX/lib/clipscribe/ (the app), PREFIX/bin/clipscribe (a link to it),
# PREFIX/share/applications/clipscribe.desktop (the menu entry) and the icon at
# PREFIX/share/icons/hicolor/<size>/apps/clipscribe.png.
set -eu
HERE="$(cd "$(dirname "$0")" && pwd)"
PREFIX="${HOME}/.local"
ACTION=install
while [ $# -gt 0 ]; do
    case "$1" in
        --prefix) PREFIX="$2"; shift 2 ;;
        --prefix=*) PREFIX="${1#--prefix=}"; shift ;;
        --uninstall) ACTION=uninstall; shift ;;
        -h|--help) sed -n '2,10p' "$0" | sed 's/^# \{0,1\}//'; exit 0 ;;
        *) echo "install.sh: unknown option $1 (try --help)" >&2; exit 2 ;;
    esac
done
LIB="$PREFIX/lib/clipscribe"
BIN="$PREFIX/bin/clipscribe"
APPS="$PREFIX/share/applications"
ICONS="$PREFIX/share/icons/hicolor"

refresh() {  # let menus pick the change up now rather than at the next login
    command -v update-desktop-database >/dev/null 2>&1 && update-desktop-database -q "$APPS" || true
    command -v gtk-update-icon-cache >/dev/null 2>&1 && gtk-update-icon-cache -q -t "$ICONS" || true
}

if [ "$ACTION" = uninstall ]; then
    rm -rf "$LIB"
    rm -f "$BIN" "$APPS/clipscribe.desktop"
    rm -f "$ICONS"/*/apps/clipscribe.png
    refresh
    echo "clipscribe removed from $PREFIX"
    exit 0
fi

[ -x "$HERE/app/clipscribe" ] || { echo "install.sh: $HERE/app/clipscribe not found" >&2; exit 1; }
mkdir -p "$PREFIX/lib" "$PREFIX/bin" "$APPS"
rm -rf "$LIB.new"
cp -a "$HERE/app" "$LIB.new"
rm -rf "$LIB"
mv "$LIB.new" "$LIB"
ln -sf "$LIB/clipscribe" "$BIN"
for dir in "$HERE"/icons/*/; do
    size="$(basename "$dir")"
    mkdir -p "$ICONS/$size/apps"
    cp "$dir/apps/clipscribe.png" "$ICONS/$size/apps/clipscribe.png"
done
# the menu entry names the installed program by its full path: ~/.local/bin is not on every
# desktop session's PATH
sed -e "s|^Exec=clipscribe |Exec=$BIN |" -e "s|^TryExec=clipscribe\$|TryExec=$BIN|" \
    "$HERE/clipscribe.desktop" >"$APPS/clipscribe.desktop"
refresh
echo "clipscribe installed: $BIN (menu entry $APPS/clipscribe.desktop)"
case ":$PATH:" in
    *":$PREFIX/bin:"*) ;;
    *) echo "note: $PREFIX/bin is not on your PATH; the menu entry works anyway" ;;
esac
