#!/usr/bin/env bash
# Fails when a function declared in the header is neither called by
# tests/c/test_bad_input.c nor listed below as taking no data or parameter
# values (only handles and output pointers), so a new entry point gets its
# bad-input rows.
set -euo pipefail
cd "$(dirname "$0")/../.."
header=ffi-c/include/plumbfit.h
test=tests/c/test_bad_input.c
no_values="pf_abi_version pf_version pf_version_number pf_status_str
pf_line_count pf_line_moments pf_line_state_len pf_model_count pf_model_params
pf_model_reset pf_model_state_len pf_levels_state_len pf_levels_count
pf_levels_layout pf_levels_new pf_levels_free pf_line_free pf_model_free
pf_line_reset pf_line_tier pf_fitted_line_anova pf_fitted_line_chi_square_p"
fns=$(grep -oE '\bpf_[a-z0-9_]+\(' "$header" | tr -d '(' | sort -u)
[ -n "$fns" ] || { echo "no pf_ functions found in $header" >&2; exit 1; }
missing=0
total=0
for f in $fns; do
  total=$((total + 1))
  case " $(echo $no_values) " in *" $f "*) continue ;; esac
  if ! grep -qE "\b$f\(" "$test"; then
    echo "no bad-input row in $test for: $f" >&2
    missing=$((missing + 1))
  fi
done
if [ "$missing" -ne 0 ]; then
  echo "bad-input matrix misses $missing of $total entry points" >&2
  exit 1
fi
echo "bad-input matrix covers every entry point that takes values ($total in the header)"
