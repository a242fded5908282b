//! samekey decides which customer records from several source systems belong to the
//! same real customer, gives each customer a stable surrogate key and publishes a
//! crosswalk (source system + source id -> customer key).
//!
//! The pipeline is one module per stage:
//!
//! ```text
//! sources -> standardize -> block -> compare -> model (EM) -> score + decide -> cluster -> keys -> output
//! ```
//!
//! [`pipeline`] chains the stages; the `samekey` binary is a thin layer of argument
//! parsing on top of it (see `src/commands/`).

#![deny(missing_docs)]

pub mod block;
pub mod cluster;
pub mod compare;
pub mod csvio;
pub mod decide;
pub mod error;
pub mod evaluate;
pub mod keys;
pub mod model;
pub mod model_file;
pub mod output;
pub mod pipeline;
pub mod prepare;
pub mod record;
pub mod refresh;
pub mod score;
pub mod shards;
pub mod sources;
pub mod spec;
pub mod standardize;
pub mod store;
pub mod summary;
pub mod synth;
pub mod util;

pub use error::{Error, Result};

/// Test data shared by the unit tests.
#[cfg(test)]
pub(crate) mod testdata {
    /// The spec of `tests/data/mini`: 20 invented records in two sources.
    pub fn mini_spec() -> crate::spec::Spec {
        let p = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/mini/spec.toml");
        crate::spec::Spec::load(&p).unwrap()
    }
}
