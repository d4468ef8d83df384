//! Following live logs: growing, truncated, rotated, deleted, not yet created, or stdin.
