//! Units and conversions to the canonical units; quantities with suffixes; schedules.
