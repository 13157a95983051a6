#!/usr/bin/env bash
# C door: header is up to date (pinned cbindgen), C tests and the example
# under valgrind, the README's build/link commands, and the static link
# flags / pkg-config file against what rustc and Cargo.toml say.
set -euo pipefail
cd "$(dirname "$0")/../.."
LIB="${CARGO_TARGET_DIR:-target}/release"
VG="valgrind -q --error-exitcode=1 --leak-check=full --errors-for-leak-kinds=all --show-leak-kinds=all"

echo "-- header: regenerate with cbindgen and compare"
want_cbindgen="cbindgen $(sed -n 's/^CBINDGEN_VERSION=//p' scripts/setup.d/30-c.sh)"
have_cbindgen="$(cbindgen --version 2>/dev/null || echo 'cbindgen missing')"
if [ "$have_cbindgen" != "$want_cbindgen" ]; then
  echo "need $want_cbindgen, found $have_cbindgen (run scripts/setup.d/30-c.sh)" >&2
  exit 1
fi
fresh="$(mktemp)"
trap 'rm -f "$fresh"' EXIT
cbindgen -q --config ffi-c/cbindgen.toml --crate plumbfit-ffi --output "$fresh"
if ! diff -u ffi-c/include/plumbfit.h "$fresh"; then
  echo "ffi-c/include/plumbfit.h is stale; regenerate it (command in ffi-c/cbindgen.toml)" >&2
  exit 1
fi

bash tests/c/check_header_docs.sh

echo "-- C tests (gcc C99 + g++), valgrind, NULL-test coverage"
bash tests/c/run.sh

echo "-- README build and link commands"
cmds="$(sed -n '/<!-- c-commands -->/,/<!-- \/c-commands -->/p' README.md | sed '/^<!--/d;/^```/d')"
[ -n "$cmds" ] || { echo "README c-commands block not found" >&2; exit 1; }
bash -euo pipefail -c "$cmds"
echo "-- firmware example under valgrind"
$VG "$LIB/firmware_static"

echo "-- static link flags and pkg-config file"
printed="$(cargo rustc -q -p plumbfit-ffi --release --lib --crate-type staticlib -- \
  --print native-static-libs 2>&1 | sed -n 's/.*native-static-libs: //p' | tail -n 1)"
pc_flags="$(sed -n 's/^Libs.private: //p' ffi-c/plumbfit.pc)"
readme_flags="$(printf '%s\n' "$cmds" | grep -oE '(-l[a-z_0-9]+ ?)+-o "\$LIB/firmware_static"' \
  | sed 's/ -o.*//')"
for f in "$pc_flags" "$readme_flags"; do
  if [ "$f" != "$printed" ]; then
    echo "static link flags differ: rustc prints '$printed', found '$f'" >&2
    exit 1
  fi
done
version="$(cargo pkgid -p plumbfit-ffi | sed 's/.*[#@]//')"
pc_version="$(sed -n 's/^Version: //p' ffi-c/plumbfit.pc)"
if [ "$version" != "$pc_version" ]; then
  echo "plumbfit.pc Version $pc_version, Cargo.toml $version" >&2
  exit 1
fi
echo "-- C door checks passed"
