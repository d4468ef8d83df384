//! cargo-fuzz target: see `plateau_fuzz::units`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| plateau_fuzz::units(data));
