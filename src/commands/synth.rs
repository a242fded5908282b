//! `kinlink synth`: generate multi-source customer data with ground truth.

use std::time::Instant;

use anyhow::Context;
use kinlink::synth::{self, NoiseConfig, SynthConfig};

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
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let cfg = SynthConfig {
        customers: args.customers,
        seed: args.seed,
        noise: NoiseConfig::default(),
    };
    cfg.check()?;
    let started = Instant::now();
    if !global.quiet {
        eprintln!(
            "generating {} customers (seed {}) ...",
            cfg.customers, cfg.seed
        );
    }
    let data = synth::generate(&cfg);
    if !global.quiet {
        eprintln!(
            "generated {} records in {:.1} s; writing ...",
            data.records(),
            started.elapsed().as_secs_f64()
        );
    }
    let summary = synth::write_dataset(&data, &args.out)
        .with_context(|| format!("writing the synthetic data to `{}`", args.out.display()))?;
    print!("{summary}");
    if !global.quiet {
        eprintln!("done in {:.1} s", started.elapsed().as_secs_f64());
    }
    Ok(())
}
