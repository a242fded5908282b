//! Stage `compare` (being written).
