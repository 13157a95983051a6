#!/usr/bin/env bash
# Speed: the criterion benches compile; every SIMD kernel set the CPU has
# (AVX-512, AVX) equals the scalar kernels and the other sets bit for bit
# in an optimized build (where the scalar lanes are compiled differently
# than in the debug run of 10-rust.sh); a short
# speed-report run exercises every measured path and fails if any call is
# refused. Timings on a CI machine are not checked (they are noise there).
set -euo pipefail
cargo bench -p plumbfit-benches --no-run
cargo test --release -p plumbfit --lib kernel::
cargo test --release -p plumbfit-kernels
cargo test --release -p plumbfit-benches
cargo run --release -p plumbfit-benches --bin speed-report -- --quick
