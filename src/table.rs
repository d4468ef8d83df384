//! Parsed rows of one run: segments, column-major values, source lines, restarts.
