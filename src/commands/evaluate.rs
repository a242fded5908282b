//! `kinlink evaluate`: score a crosswalk (and pairs) against a truth file.

use super::Global;

/// Arguments of `kinlink evaluate`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Truth file.
    #[arg(long)]
    pub truth: std::path::PathBuf,
}

/// Run `kinlink evaluate`.
pub fn run(_args: &Args, _global: Global) -> anyhow::Result<()> {
    anyhow::bail!("`kinlink evaluate` is being written")
}
