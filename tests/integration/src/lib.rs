//! Cross-crate integration tests for plumbfit live in `tests/`.
