//! Stage `keys` (being written).
