#!/usr/bin/env bash
# Fails when a function, type, struct field or macro in the generated header
# has no documentation comment right above it (cbindgen copies the Rust doc
# comments, so a missing one means an undocumented item in ffi-c/src).
set -euo pipefail
cd "$(dirname "$0")/../.."
awk '
  /^\/\*/ || /^ *\/\*/ { in_c = 1 }
  in_c && /\*\// { in_c = 0; last_doc = NR; next }
  in_c { next }
  /^#ifndef PLUMBFIT_H|^#define PLUMBFIT_H|^#endif|^#include|^#ifdef __cplusplus|^extern "C"|^}  \/\/ extern|^} \/\/ extern/ { next }
  /^[[:space:]]*$/ { next }
  # Lines that declare something: macros, typedefs, functions, fields.
  /^#define PF_|^typedef|^[a-z].*pf_[a-z0-9_]+\(|^    [a-z_0-9 *]+ [a-z_0-9]+(\[[A-Z_0-9]+\])?;/ {
    if (last_doc != NR - 1) { printf "undocumented (line %d): %s\n", NR, $0; bad++ }
    next
  }
  END { if (bad) { printf "%d undocumented items in the header\n", bad; exit 1 } }
' ffi-c/include/plumbfit.h
echo "every item in ffi-c/include/plumbfit.h is documented"
