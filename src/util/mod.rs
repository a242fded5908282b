//! Small shared helpers: a deterministic random number generator, stable hashing,
//! progress display and CPU clocks.

pub mod civil;
pub mod cpu;
pub mod progress;
pub mod rng;
pub mod timings;

pub use progress::Progress;
pub use rng::{mix64, stable_hash, MixHasher, Rng};
pub use timings::Timings;

/// Cut `items` into this many chunks per thread for load balance.
const CHUNKS_PER_THREAD: usize = 16;

/// Most items (blocks or slices of large blocks) in one chunk of parallel work.
const MAX_CHUNK_ITEMS: usize = 4096;

/// Split work items into chunks for parallel processing: about 16 per thread and at most
/// 4,096 items each, so that a wave of chunks (output waiting to be written in order)
/// stays small however much work there is. Callers combine results in item order, so the
/// outcome is the same for any chunking.
pub fn chunks<T>(items: &[T]) -> Vec<&[T]> {
    let want = rayon::current_num_threads().max(1) * CHUNKS_PER_THREAD;
    let size = items.len().div_ceil(want.max(1)).clamp(1, MAX_CHUNK_ITEMS);
    items.chunks(size).collect()
}
