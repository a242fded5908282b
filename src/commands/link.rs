//! `samekey link`: run the whole pipeline on the sources a spec names.

use std::path::PathBuf;

use anyhow::Context;
use samekey::output::PairsOutput;
use samekey::pipeline::{self, RunOptions};

use super::{summary, Global, Hint};

/// Arguments of `samekey link`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The linkage spec (TOML).
    #[arg(long)]
    pub spec: PathBuf,
    /// Output folder for crosswalk.csv, pairs.csv, review.csv, rejects.csv, refused.csv,
    /// model.toml and summary.json.
    #[arg(long)]
    pub out: PathBuf,
    /// Use this fitted model instead of fitting one (see `samekey train`).
    #[arg(long)]
    pub model: Option<PathBuf>,
    /// Which pairs to write to pairs.csv: every candidate pair, or only match and review.
    #[arg(long, value_enum, default_value_t = PairsArg::All)]
    pub pairs: PairsArg,
    /// Choose the match threshold so that the model's estimated precision is P (0..1).
    #[arg(long, value_name = "P", allow_negative_numbers = true, value_parser = super::values::open_fraction)]
    pub target_precision: Option<f64>,
    /// Truth file (`source,source_id,entity_id`): print actual quality next to estimates.
    #[arg(long)]
    pub truth: Option<PathBuf>,
    /// Score only shard I of N (e.g. `--shard 2/4`); needs --model. Combine the shards'
    /// outputs with `samekey merge`.
    #[arg(long, value_name = "I/N", value_parser = parse_shard, allow_hyphen_values = true)]
    pub shard: Option<(usize, usize)>,
    /// Print the time spent per stage.
    #[arg(long)]
    pub timings: bool,
    /// Print the run summary as JSON (the content of OUT/summary.json) instead of text.
    #[arg(long)]
    pub json: bool,
}

/// Parse `I/N` with 1 ≤ I ≤ N into a 0-based shard index and the shard count.
fn parse_shard(s: &str) -> Result<(usize, usize), String> {
    let bad = || format!("`{s}`: write the shard as I/N with 1 <= I <= N, e.g. 2/4");
    let (i, n) = s.split_once('/').ok_or_else(bad)?;
    let (i, n): (usize, usize) = (
        i.trim().parse().map_err(|_| bad())?,
        n.trim().parse().map_err(|_| bad())?,
    );
    if i == 0 || i > n {
        return Err(bad());
    }
    Ok((i - 1, n))
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

/// Run `samekey link`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let spec = super::values::load_spec(&args.spec).with_context(|| {
        Hint("the spec keys are described in the README, section \"Spec reference\"".into())
    })?;
    if args.shard.is_some() && args.truth.is_some() {
        return Err(samekey::Error::Usage(
            "--truth needs a crosswalk, which a shard run does not write; evaluate the output \
             of `samekey merge` with `samekey evaluate`"
                .into(),
        )
        .into());
    }
    // Read and check every input before anything is replaced: a bad model or truth
    // file must not cost the previous outputs.
    if let Some(m) = &args.model {
        super::values::input_file(m, "--model", true)?;
    }
    if let Some(truth) = &args.truth {
        super::values::input_file(truth, "--truth", true)?;
        samekey::evaluate::read_truth(truth)?;
    }
    if args.json && args.truth.is_some() {
        return Err(samekey::Error::Usage(
            "--json prints the run summary only; score the outputs against the truth file \
             with `samekey evaluate --json` instead of --truth"
                .into(),
        )
        .into());
    }
    let opts = RunOptions {
        progress: !global.quiet && !args.json,
        shard: args.shard,
        target_precision: args.target_precision,
        out: args.out.clone(),
        model: args.model.clone(),
        pairs: args.pairs.into(),
    };
    let summary = pipeline::run(&spec, &opts)?;
    if global.quiet {
        return Ok(());
    }
    if args.json {
        println!("{}", serde_json::to_string_pretty(&summary.to_json())?);
        return Ok(());
    }
    summary::print(&summary, args.timings);
    if let Some(truth) = &args.truth {
        summary::print_actual(
            truth,
            &args.out,
            &summary,
            args.pairs == PairsArg::All,
            global,
        )?;
    }
    Ok(())
}
