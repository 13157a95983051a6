//! Replicate-level store blobs (raw, checksum-corrected, or built from
//! decoded records) through both store types (see the harness docs).
#![no_main]

#[path = "../../core/tests/state_support/harness.rs"]
mod harness;

libfuzzer_sys::fuzz_target!(|data: &[u8]| harness::check_levels_decode(data));
