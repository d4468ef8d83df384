//! Settings: `plateau.toml` (current folder or `--config`) merged with the command line.
