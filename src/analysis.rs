//! Run-level analysis: applies the statistics in `stats` to a mapped table (pure, no I/O).
