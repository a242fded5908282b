//! `kinlink demo`: link the shipped demo data and score the result against its truth.

use std::path::PathBuf;

use kinlink::evaluate;
use kinlink::pipeline::{self, RunOptions};
use kinlink::spec::Spec;

use super::{summary, Global};

/// Arguments of `kinlink demo`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Folder with the demo data (spec.toml, the source CSVs, truth.csv).
    #[arg(long, default_value = concat!(env!("CARGO_MANIFEST_DIR"), "/demo-data"))]
    pub data: PathBuf,
    /// Output folder.
    #[arg(long, default_value = "kinlink-demo-out")]
    pub out: PathBuf,
    /// Print the time spent per stage.
    #[arg(long)]
    pub timings: bool,
}

/// Run `kinlink demo`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let spec = Spec::load(&args.data.join("spec.toml"))?;
    let opts = RunOptions {
        out: args.out.clone(),
        ..Default::default()
    };
    let summary = pipeline::run(&spec, &opts)?;
    if !global.quiet {
        println!(
            "kinlink demo: invented customers of three systems, see {}\n",
            args.data.display()
        );
        summary::print(&summary, args.timings);
    }
    // Score against the demo truth (never used in fitting).
    let truth_path = args.data.join("truth.csv");
    let truth = evaluate::read_truth(&truth_path)?;
    let crosswalk = evaluate::read_crosswalk(args.out.join("crosswalk.csv"))?;
    let mut metrics = evaluate::evaluate(&truth, &crosswalk);
    let pairs = evaluate::read_pairs(args.out.join("pairs.csv"), &truth)?;
    metrics.blocking = Some(evaluate::blocking_metrics(&truth, &pairs));
    if !global.quiet {
        println!(
            "\nEvaluation against {} (truth is not used in fitting)",
            truth_path.display()
        );
        for w in super::evaluate::warnings(&metrics) {
            println!("  warning: {w}");
        }
        print!("{}", super::evaluate::render_table(&metrics));
        println!("\nAll outputs are in {}", args.out.display());
    }
    Ok(())
}
