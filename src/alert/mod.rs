//! Alert engine: kinds, severities, sustained windows and hysteresis (pure, no I/O).
