//! Stage `spec` (being written).
