//! Stage `classify` (being written).
