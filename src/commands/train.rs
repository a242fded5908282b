//! `samekey train`: fit a model on the sources a spec names and save it.

use std::path::PathBuf;

use samekey::model::train;
use samekey::prepare::{PrepareOptions, Prepared};
use samekey::util::Progress;

use super::Global;

/// Arguments of `samekey train`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The linkage spec (TOML).
    #[arg(long)]
    pub spec: PathBuf,
    /// Output folder: the model is written to OUT/model.toml, e.g. models/mydata.
    #[arg(long)]
    pub out: PathBuf,
    /// Fit from true labels instead of EM (the "oracle" model, to measure how close the
    /// unsupervised fit comes): truth file `source,source_id,entity_id`.
    #[arg(long)]
    pub oracle_truth: Option<PathBuf>,
    /// Print the summary as JSON.
    #[arg(long)]
    pub json: bool,
}

/// The model file inside `train`'s output folder.
pub const MODEL_FILE: &str = "model.toml";

/// Check `--out` before any work: it names a folder (existing or not), never a file.
fn model_path(out: &std::path::Path) -> samekey::Result<PathBuf> {
    let looks_like_file = out
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("toml"));
    if out.is_file() || looks_like_file {
        let folder = out.with_extension("");
        return Err(samekey::Error::Usage(format!(
            "--out {}: give an output folder, not a file; the model is written to \
             FOLDER/{MODEL_FILE} (e.g. --out {})",
            out.display(),
            folder.display()
        )));
    }
    Ok(out.join(MODEL_FILE))
}

/// Run `samekey train`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let spec = super::values::load_spec(&args.spec)?;
    let model_file = model_path(&args.out)?;
    samekey::output::staging::check_out_dir(&args.out, "--out")?;
    let truth = match &args.oracle_truth {
        Some(p) => Some(samekey::evaluate::read_truth(p)?),
        None => None,
    };
    let prepared = Prepared::new(
        &spec,
        PrepareOptions {
            progress: !global.quiet && !args.json,
            pair_limit: true,
            purpose: "fitting",
        },
    )?;
    let t = match &truth {
        None => {
            let pairs: u64 = prepared.tasks.iter().map(|t| prepared.task_pairs(t)).sum();
            let bar = Progress::bar(
                !global.quiet && !args.json,
                "compare (count vectors)",
                pairs,
                "pairs",
            );
            let t = train::train(&spec, &prepared, &bar)?;
            bar.finish();
            t
        }
        Some(truth) => train::train_oracle(&spec, &prepared, truth)?,
    };
    std::fs::create_dir_all(&args.out).map_err(|e| samekey::Error::io(&args.out, e))?;
    t.model.save(&model_file)?;
    if global.quiet {
        return Ok(());
    }
    if args.json {
        let v = samekey::summary::train_json(&t.model, &t.sources, &model_file, truth.is_some());
        println!("{}", serde_json::to_string_pretty(&v)?);
    } else {
        let records: u64 = t.sources.iter().map(|s| s.accepted).sum();
        if args.oracle_truth.is_some() {
            println!("oracle fit from true labels (for comparison only; not for production use)");
        }
        println!(
            "fitted on {records} records and {} candidate pairs: λ = {:.3e} (prior {:+.2} bits), \
             {} EM iterations",
            t.model.candidate_pairs,
            t.model.lambda,
            samekey::decide::prior_log2_odds(t.model.lambda),
            t.model.iterations()
        );
        for a in &t.model.attribute {
            let levels: Vec<String> = a
                .levels
                .iter()
                .zip(&a.weight)
                .map(|(l, w)| format!("{l} {w:+.2} bits"))
                .collect();
            println!("  {:<14} {}", a.attribute, levels.join(" | "));
        }
        println!("model written to {}", model_file.display());
    }
    Ok(())
}
