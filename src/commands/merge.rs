//! `samekey merge`: cluster the matched pairs of several shard runs into one crosswalk.

use std::path::PathBuf;

use samekey::shards;

use super::Global;

/// Arguments of `samekey merge`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The linkage spec the shards were run with.
    #[arg(long)]
    pub spec: PathBuf,
    /// Output folder for crosswalk.csv and refused.csv.
    #[arg(long)]
    pub out: PathBuf,
    /// Output folders of the shard runs (`samekey link --shard I/N`).
    #[arg(required = true)]
    pub shards: Vec<PathBuf>,
    /// Print the summary as JSON.
    #[arg(long)]
    pub json: bool,
}

/// Run `samekey merge`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let spec = super::values::load_spec(&args.spec)?;
    let s = shards::merge(&spec, &args.shards, &args.out, !global.quiet && !args.json)?;
    if global.quiet {
        return Ok(());
    }
    if args.json {
        println!("{}", serde_json::to_string_pretty(&s.to_json())?);
    } else {
        println!(
            "merged {} shard(s): {} matched pairs, {} records, {} customers, {} merges refused",
            args.shards.len(),
            s.match_pairs,
            s.records,
            s.customers,
            s.refused_merges
        );
        for p in &s.outputs {
            println!("  {}", p.display());
        }
    }
    Ok(())
}
