# Sourced by the install tests: install the build into a staging directory
# ($stage, under a temporary $tmp removed on exit) and set
#   prefix  the staged prefix ($stage/usr/local, or whatever -Dprefix says)
#   libdir  the staged library directory
#   pcdir   its pkgconfig directory
#   grid    the staged default grid (exported as HRTRAIL_GRID)
# and PKG_CONFIG_PATH so that pkg-config answers for the staged files.  Usage: build=BUILD_ROOT; . stage.sh
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
stage=$tmp/stage
if ! meson install -C "$build" --destdir "$stage" --no-rebuild --quiet > "$tmp/install.log" 2>&1; then
    cat "$tmp/install.log"
    echo "FAIL: meson install --destdir"
    exit 1
fi
pc=$(find "$stage" -name hrtrail.pc | head -n 1)
[ -n "$pc" ] || { echo "FAIL: no hrtrail.pc installed"; exit 1; }
pcdir=$(dirname "$pc")
# The staged .pc files with their prefix moved into the staging directory (as
# for any relocated install); the system's .pc files (GSL, HDF5) stay as they are.
mkdir -p "$tmp/pkgconfig"
for f in "$pcdir"/*.pc; do
    sed "s|^prefix=\(.*\)|prefix=$stage\1|" "$f" > "$tmp/pkgconfig/$(basename "$f")"
done
export PKG_CONFIG_PATH="$tmp/pkgconfig"
libdir=$(pkg-config --variable=libdir hrtrail)
prefix=$(pkg-config --variable=prefix hrtrail)
grid=$(pkg-config --variable=datadir hrtrail)/hrtrail-default-grid.h5
[ -f "$grid" ] || { echo "FAIL: no default grid at $grid"; exit 1; }
export HRTRAIL_GRID="$grid" LD_LIBRARY_PATH="$libdir"
fail=0
check() {  # check CONDITION-EXIT-STATUS MESSAGE
    if [ "$1" -eq 0 ]; then echo "ok: $2"; else echo "FAIL: $2"; fail=1; fi
}
