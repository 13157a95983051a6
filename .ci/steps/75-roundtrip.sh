#!/usr/bin/env bash
# Cross-door round trip: Rust builds and saves a lean line, a full line and a
# model (p = 3) from an invented data part; the C program restores them (its
# own save must give the same bytes), adds a second part and saves; Python
# restores the C output (same check), merges a third part, and the final
# bytes and fit must equal, bit for bit, the Rust door doing all three parts
# with the same calls. Uses the C library of step 30 and the Python package
# that scripts/setup.d/40-python.sh installed.
set -euo pipefail
cd "$(dirname "$0")/../.."
T="${CARGO_TARGET_DIR:-target}"
LIB="$T/release"
DIR="$T/roundtrip"
PYTHON="${PYTHON:-python3}"
rm -rf "$DIR"
mkdir -p "$DIR"
cargo build -q --release -p plumbfit-ffi
cargo run -q --release -p plumbfit-roundtrip -- "$DIR"
STATIC_LIBS="$(sed -n 's/^Libs.private: //p' ffi-c/plumbfit.pc)"
# shellcheck disable=SC2086
gcc -std=c99 -Wall -Wextra -Werror -pedantic -g -O1 -I ffi-c/include tests/roundtrip/roundtrip.c \
  "$LIB/libplumbfit.a" $STATIC_LIBS -o "$DIR/roundtrip"
echo "-- C step (valgrind)"
valgrind -q --error-exitcode=1 --leak-check=full --errors-for-leak-kinds=all \
  "$DIR/roundtrip" "$DIR"
echo "-- Python step"
"$PYTHON" tests/roundtrip/roundtrip.py "$DIR"
