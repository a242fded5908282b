//! Benchmarks of the string kernels (being written).

fn main() {}
