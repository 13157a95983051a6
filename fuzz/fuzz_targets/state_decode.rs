//! Arbitrary bytes through every state decoder (see the harness docs).
#![no_main]

#[path = "../../core/tests/state_support/harness.rs"]
mod harness;

libfuzzer_sys::fuzz_target!(|data: &[u8]| harness::check_decode(data));
