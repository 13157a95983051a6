#!/usr/bin/env bash
# C door bad-input matrix (tests/c/test_bad_input.c): every entry point that
# takes data or parameters, with the documented status, the state unchanged
# and no output written. Built as C99 (gcc) and as C++ (g++), run under
# valgrind (any error or leak fails), and once more with AddressSanitizer and
# UndefinedBehaviorSanitizer.
set -euo pipefail
cd "$(dirname "$0")/../.."
LIB="${CARGO_TARGET_DIR:-target}/release"
OUT="${CARGO_TARGET_DIR:-target}/c-tests"
mkdir -p "$OUT"
cargo build -q --release -p plumbfit-ffi
STATIC_LIBS="$(sed -n 's/^Libs.private: //p' ffi-c/plumbfit.pc)"
CFLAGS_C="-std=c99 -Wall -Wextra -Werror -pedantic -g -O1"
CFLAGS_CXX="-std=c++11 -Wall -Wextra -Werror -pedantic -g -O1"
VG="valgrind -q --error-exitcode=1 --leak-check=full --errors-for-leak-kinds=all --show-leak-kinds=all"
# shellcheck disable=SC2086
gcc $CFLAGS_C -I ffi-c/include tests/c/test_bad_input.c "$LIB/libplumbfit.a" $STATIC_LIBS \
  -o "$OUT/test_bad_input"
# shellcheck disable=SC2086
g++ $CFLAGS_CXX -x c++ -I ffi-c/include tests/c/test_bad_input.c -x none "$LIB/libplumbfit.a" \
  $STATIC_LIBS -o "$OUT/test_bad_input-cxx"
# shellcheck disable=SC2086
gcc $CFLAGS_C -fsanitize=address,undefined -fno-sanitize-recover=all -I ffi-c/include \
  tests/c/test_bad_input.c "$LIB/libplumbfit.a" $STATIC_LIBS -o "$OUT/test_bad_input-san"
for t in test_bad_input test_bad_input-cxx; do
  echo "-- $t (valgrind)"
  $VG "$OUT/$t"
done
echo "-- test_bad_input (address + undefined-behaviour sanitizers)"
"$OUT/test_bad_input-san"
bash tests/c/check_bad_input_coverage.sh
