#!/usr/bin/env bash
# Builds the C library (release), the Rust reference values and the C tests
# (as C99 with gcc and as C++ with g++), then runs every test under valgrind
# (any error or leak fails), once more built with AddressSanitizer and
# UndefinedBehaviorSanitizer on the C side, and checks that the NULL test
# covers the header.
set -euo pipefail
cd "$(dirname "$0")/../.."
LIB="${CARGO_TARGET_DIR:-target}/release"
OUT="${CARGO_TARGET_DIR:-target}/c-tests"
mkdir -p "$OUT"
cargo build -q --release -p plumbfit-ffi
cargo run -q --release -p plumbfit-ffi --example parity_values > "$OUT/parity_values.txt"
STATIC_LIBS="$(sed -n 's/^Libs.private: //p' ffi-c/plumbfit.pc)"
CFLAGS_C="-std=c99 -Wall -Wextra -Werror -pedantic -g -O1"
CFLAGS_CXX="-std=c++11 -Wall -Wextra -Werror -pedantic -g -O1"
VG="valgrind -q --error-exitcode=1 --leak-check=full --errors-for-leak-kinds=all --show-leak-kinds=all --suppressions=tests/c/valgrind.supp"
for t in test_line test_null; do
  # shellcheck disable=SC2086
  gcc $CFLAGS_C -I ffi-c/include "tests/c/$t.c" "$LIB/libplumbfit.a" $STATIC_LIBS -o "$OUT/$t"
  # shellcheck disable=SC2086
  g++ $CFLAGS_CXX -x c++ -I ffi-c/include "tests/c/$t.c" -x none "$LIB/libplumbfit.a" $STATIC_LIBS -o "$OUT/$t-cxx"
done
for t in test_line test_line-cxx; do
  echo "-- $t (valgrind)"
  $VG "$OUT/$t" "$OUT/parity_values.txt"
done
for t in test_null test_null-cxx; do
  echo "-- $t (valgrind)"
  $VG "$OUT/$t"
done
SAN="-fsanitize=address,undefined -fno-sanitize-recover=all"
for t in test_line test_null; do
  # shellcheck disable=SC2086
  gcc $CFLAGS_C $SAN -I ffi-c/include "tests/c/$t.c" "$LIB/libplumbfit.a" $STATIC_LIBS -o "$OUT/$t-san"
done
echo "-- test_line, test_null (address + undefined-behaviour sanitizers)"
"$OUT/test_line-san" "$OUT/parity_values.txt"
"$OUT/test_null-san"
bash tests/c/check_null_coverage.sh
