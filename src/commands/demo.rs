//! `samekey demo`: link the shipped demo data and score the result against its truth.

use std::path::PathBuf;

use samekey::pipeline::{self, RunOptions};
use samekey::spec::Spec;

use super::{summary, Global};

/// Arguments of `samekey demo`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Folder with the demo data (spec.toml, the source CSVs, truth.csv).
    #[arg(long, default_value = concat!(env!("CARGO_MANIFEST_DIR"), "/demo-data"))]
    pub data: PathBuf,
    /// Output folder.
    #[arg(long, default_value = "samekey-demo-out")]
    pub out: PathBuf,
    /// Print the time spent per stage.
    #[arg(long)]
    pub timings: bool,
}

/// Run `samekey demo`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let spec = Spec::load(&args.data.join("spec.toml"))?;
    let opts = RunOptions {
        progress: !global.quiet,
        out: args.out.clone(),
        ..Default::default()
    };
    let summary = pipeline::run(&spec, &opts)?;
    if !global.quiet {
        println!(
            "samekey demo: invented customers of three systems, see {}\n",
            args.data.display()
        );
        summary::print(&summary, args.timings);
    }
    summary::print_actual(&args.data.join("truth.csv"), &args.out, &summary, global)?;
    if !global.quiet {
        println!("\nAll outputs are in {}", args.out.display());
    }
    Ok(())
}
