//! Invented MD scenarios: synthetic energy logs for the demo, examples and benchmarks.
