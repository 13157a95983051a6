//! Benchmarks for plumbfit (criterion benches live in `benches/`).
