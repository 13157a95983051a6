#!/usr/bin/env bash
# Fails when a function declared in the header is not exercised by
# tests/c/test_null.c (the NULL / bad-length test must cover every entry point):
# each function must be called inside an EXPECT(...) or CHECK(...) there.
set -euo pipefail
cd "$(dirname "$0")/../.."
header=ffi-c/include/plumbfit.h
test=tests/c/test_null.c
fns=$(grep -oE '\bpf_[a-z0-9_]+\(' "$header" | tr -d '(' | sort -u)
[ -n "$fns" ] || { echo "no pf_ functions found in $header" >&2; exit 1; }
missing=0
total=0
for f in $fns; do
  total=$((total + 1))
  if ! grep -qE "(EXPECT|CHECK)\($f\(" "$test"; then
    echo "not covered by $test: $f" >&2
    missing=$((missing + 1))
  fi
done
if [ "$missing" -ne 0 ]; then
  echo "null/bad-length test misses $missing of $total entry points" >&2
  exit 1
fi
echo "null/bad-length test covers all $total entry points"
