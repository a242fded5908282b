//! String similarity kernels (being written).
