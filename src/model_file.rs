//! The model file on disk: a path in, a [`Model`] checked against the spec out, and back.
//!
//! The `model` stage turns text into a model and a model into text
//! ([`Model::from_toml`], [`Model::to_toml`]) and touches no file; reading and writing
//! the file is this module's job, at the I/O edge.

use std::path::Path;

use crate::error::{Error, Result};
use crate::model::Model;
use crate::spec::Spec;

impl Model {
    /// Read a model file and check it fits `spec`.
    pub fn load(path: &Path, spec: &Spec) -> Result<Model> {
        let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
        Model::from_toml(&text, path, spec)
    }

    /// Write the model as TOML to `path` (atomically: temp file, then rename).
    pub fn save(&self, path: &Path) -> Result<()> {
        crate::output::write_atomic(path, self.to_toml()?.as_bytes())
    }
}
