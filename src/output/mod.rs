//! Stage `output` (being written).
