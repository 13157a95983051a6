#!/usr/bin/env bash
# The calibration demo: run it once in release (it writes
# out/calibration-report.svg) and check the report with its own tests.
set -euo pipefail
cargo run --release -q -p plumbfit-demo
test -s out/calibration-report.svg
cargo test --release -p plumbfit-demo
