#!/usr/bin/env bash
# Accuracy report against the NIST StRD certified values (CI=true makes
# missing reference data a failure).
set -euo pipefail
cargo run --release -p reference-checks
cargo test --release -p reference-checks
