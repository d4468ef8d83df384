//! The log reader: a pure, chunk-fed parser for any engine's tabular energy log.
