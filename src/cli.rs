//! Command-line definitions (clap derive). No logic, no I/O.
