//! Random push/extend/merge/forget/save/restore sequences on every
//! accumulator kind, checking the state invariants after each step.
#![no_main]

#[path = "../../core/tests/state_support/harness.rs"]
mod harness;

libfuzzer_sys::fuzz_target!(|data: &[u8]| harness::check_ops(data));
