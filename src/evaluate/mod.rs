//! Stage `evaluate` (being written).
