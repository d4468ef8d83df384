//! cargo-fuzz target: see `plateau_fuzz::header_layout`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| plateau_fuzz::header_layout(data));
