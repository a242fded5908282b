//! Stage `model` (being written).
