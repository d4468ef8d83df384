//! plateau: watch molecular-dynamics energy logs while they are written.
//!
//! The library holds everything; `src/main.rs` only parses the command line and maps the
//! outcome to an exit code. Pure modules (`parse`, `units`, `mapping`, `table`, `stats`,
//! `analysis`, `alert`) do no I/O and read no clock; `ingest`, `follow`, `scheduler`,
//! `report` and `commands` are the edges.

pub mod alert;
pub mod analysis;
pub mod cli;
pub mod commands;
pub mod config;
pub mod demo;
pub mod error;
pub mod fold;
pub mod follow;
pub mod ingest;
pub mod live;
pub mod mapping;
pub mod parse;
pub mod progress;
pub mod report;
pub mod scenario;
pub mod scheduler;
pub mod stages;
pub mod stats;
pub mod table;
pub mod text;
pub mod tui;
pub mod units;
