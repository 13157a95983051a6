#!/usr/bin/env bash
# Residual diagnostics: plumbfit's values on 24 generated data sets against
# SciPy, statsmodels and exact rationals (tests/diag_reference), then the
# release-mode core checks (NIST Norris exact sums, Durbin–Watson Monte
# Carlo). CI=true makes missing reference data a failure.
set -euo pipefail
cd "$(dirname "$0")/../.."
out="$(mktemp -d)/diag_reference.json"
cargo run --release -q -p plumbfit-diag-reference -- "$out"
PLUMBFIT_DIAG_JSON="$out" python3 -m pytest -p no:cacheprovider -q -s tests/diag_reference
cargo test --release -q -p plumbfit --test diag_norris --test diag_serial --test diag_api -- --nocapture
