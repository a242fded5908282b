//! Small shared helpers: a deterministic random number generator, stable hashing,
//! progress display and CPU clocks.

pub mod cpu;
pub mod progress;
pub mod rng;

pub use progress::Progress;
pub use rng::{mix64, stable_hash, MixHasher, Rng};
