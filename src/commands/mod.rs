//! One module per subcommand: each turns validated settings into output and an outcome.
pub mod check;
pub mod generate;
