//! `plateau check FILE...`: alerts for job scripts, with an exit code.

pub mod hook;
