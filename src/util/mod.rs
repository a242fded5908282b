//! Small shared helpers: a deterministic random number generator and stable hashing.

pub mod rng;

pub use rng::{stable_hash, Rng};
