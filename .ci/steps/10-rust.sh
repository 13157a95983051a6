#!/usr/bin/env bash
# Rust: formatting, lints, tests (debug), the no_std build and smoke crate.
set -euo pipefail
cargo fmt --all -- --check
cargo clippy --workspace --all-targets -- -D warnings
cargo test --workspace
cargo build -p plumbfit --no-default-features
(cd tests/no_std_smoke && cargo build)
RUSTDOCFLAGS="-D warnings" cargo doc -p plumbfit --no-deps
