//! Typed errors with context (file, line, key).
