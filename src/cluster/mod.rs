//! Stage `cluster` (being written).
