//! Stage `block` (being written).
