//! cargo-fuzz target: see `plateau_fuzz::block_parser`.
#![no_main]

libfuzzer_sys::fuzz_target!(|data: &[u8]| plateau_fuzz::block_parser(data));
