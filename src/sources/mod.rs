//! Stage `sources` (being written).
