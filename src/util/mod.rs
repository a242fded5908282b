//! Small shared helpers: a deterministic random number generator, stable hashing and
//! progress display.

pub mod progress;
pub mod rng;

pub use progress::Progress;
pub use rng::{mix64, stable_hash, MixHasher, Rng};
