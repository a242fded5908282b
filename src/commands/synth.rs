//! `kinlink synth`: generate multi-source customer data with ground truth.

use super::Global;

/// Arguments of `kinlink synth`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Number of distinct customers to generate.
    #[arg(long, default_value_t = 1000)]
    pub customers: usize,
    /// Random seed; the same seed gives the same data.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Output folder (created if missing).
    #[arg(long)]
    pub out: std::path::PathBuf,
}

/// Run `kinlink synth`.
pub fn run(_args: &Args, global: Global) -> anyhow::Result<()> {
    let _ = global.quiet;
    anyhow::bail!("`kinlink synth` is being written")
}
