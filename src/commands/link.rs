//! `kinlink link`: run the whole pipeline on the sources a spec names.

use std::path::PathBuf;

use anyhow::Context;
use kinlink::pipeline::{self, PairsOutput, RunOptions};
use kinlink::spec::Spec;

use super::{summary, Global, Hint};

/// Arguments of `kinlink link`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The linkage spec (TOML).
    #[arg(long)]
    pub spec: PathBuf,
    /// Output folder for crosswalk.csv, pairs.csv, review.csv, rejects.csv, model.toml.
    #[arg(long)]
    pub out: PathBuf,
    /// Use this fitted model instead of fitting one (see `kinlink train`).
    #[arg(long)]
    pub model: Option<PathBuf>,
    /// Which pairs to write to pairs.csv: every candidate pair, or only match and review.
    #[arg(long, value_enum, default_value_t = PairsArg::All)]
    pub pairs: PairsArg,
    /// Choose the match threshold so that the model's estimated precision is P (0..1).
    #[arg(long, value_name = "P")]
    pub target_precision: Option<f64>,
    /// Truth file (`source,source_id,entity_id`): print actual quality next to estimates.
    #[arg(long)]
    pub truth: Option<PathBuf>,
    /// Print the time spent per stage.
    #[arg(long)]
    pub timings: bool,
}

/// `--pairs` values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum PairsArg {
    /// Every candidate pair.
    All,
    /// Only pairs decided match or review.
    Linked,
}

impl From<PairsArg> for PairsOutput {
    fn from(p: PairsArg) -> Self {
        match p {
            PairsArg::All => PairsOutput::All,
            PairsArg::Linked => PairsOutput::Linked,
        }
    }
}

/// Run `kinlink link`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let spec = Spec::load(&args.spec)
        .map_err(anyhow::Error::from)
        .with_context(|| {
            Hint("the spec keys are described in the README, section \"Spec reference\"".into())
        })?;
    if let Some(p) = args.target_precision {
        if !(p > 0.0 && p < 1.0) {
            return Err(kinlink::Error::Usage(format!(
                "--target-precision {p}: give a precision strictly between 0 and 1, e.g. 0.99"
            ))
            .into());
        }
    }
    let opts = RunOptions {
        target_precision: args.target_precision,
        out: args.out.clone(),
        model: args.model.clone(),
        pairs: args.pairs.into(),
    };
    let summary = pipeline::run(&spec, &opts)?;
    if !global.quiet {
        summary::print(&summary, args.timings);
    }
    if let Some(truth) = &args.truth {
        summary::print_actual(truth, &args.out, &summary, global)?;
    }
    Ok(())
}
