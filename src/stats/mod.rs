//! Statistics as pure functions on slices (no I/O, no clocks). Each names its method.
