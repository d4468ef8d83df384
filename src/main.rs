//! Thin binary: everything lives in the library.
fn main() {}
