//! `samekey train`: fit a model on the sources a spec names and save it.

use std::path::PathBuf;

use samekey::model::train;
use samekey::prepare::{PrepareOptions, Prepared};
use samekey::spec::Spec;
use samekey::util::Progress;

use super::Global;

/// Arguments of `samekey train`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The linkage spec (TOML).
    #[arg(long)]
    pub spec: PathBuf,
    /// Where to write the model file (TOML), e.g. models/mydata.toml.
    #[arg(long)]
    pub out: PathBuf,
    /// Fit from true labels instead of EM (the "oracle" model, to measure how close the
    /// unsupervised fit comes): truth file `source,source_id,entity_id`.
    #[arg(long)]
    pub oracle_truth: Option<PathBuf>,
}

/// Run `samekey train`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let spec = Spec::load(&args.spec)?;
    let truth = match &args.oracle_truth {
        Some(p) => Some(samekey::evaluate::read_truth(p)?),
        None => None,
    };
    let prepared = Prepared::new(
        &spec,
        PrepareOptions {
            progress: !global.quiet,
            pair_limit: true,
            purpose: "fitting",
        },
    )?;
    let t = match &truth {
        None => train::train(&spec, &prepared, &Progress::hidden())?,
        Some(truth) => train::train_oracle(&spec, &prepared, truth)?,
    };
    t.model.save(&args.out)?;
    if !global.quiet {
        let records: u64 = t.sources.iter().map(|s| s.accepted).sum();
        if args.oracle_truth.is_some() {
            println!("oracle fit from true labels (for comparison only; not for production use)");
        }
        println!(
            "fitted on {records} records and {} candidate pairs: λ = {:.3e}, {} EM iterations",
            t.model.candidate_pairs,
            t.model.lambda,
            t.model.iterations()
        );
        for a in &t.model.attribute {
            let levels: Vec<String> = a
                .levels
                .iter()
                .zip(&a.weight)
                .map(|(l, w)| format!("{l} {w:+.2}"))
                .collect();
            println!("  {:<14} {}", a.attribute, levels.join(" | "));
        }
        println!("model written to {}", args.out.display());
    }
    Ok(())
}
