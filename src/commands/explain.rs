//! `samekey explain`: why two records match or not, attribute by attribute.

use std::path::PathBuf;

use samekey::model::Model;
use samekey::pipeline;
use samekey::spec::Spec;

use super::Global;

/// Arguments of `samekey explain`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The linkage spec (TOML).
    #[arg(long)]
    pub spec: PathBuf,
    /// The fitted model (e.g. OUT/model.toml of a `link` run).
    #[arg(long)]
    pub model: PathBuf,
    /// First record as SOURCE:ID, e.g. crm:10482.
    #[arg(value_parser = parse_record)]
    pub a: (String, String),
    /// Second record as SOURCE:ID.
    #[arg(value_parser = parse_record)]
    pub b: (String, String),
}

fn parse_record(s: &str) -> Result<(String, String), String> {
    match s.split_once(':') {
        Some((src, id)) if !src.is_empty() && !id.is_empty() => Ok((src.into(), id.into())),
        _ => Err(format!(
            "`{s}`: write a record as SOURCE:ID, e.g. crm:10482"
        )),
    }
}

/// Run `samekey explain`.
pub fn run(args: &Args, _global: Global) -> anyhow::Result<()> {
    let spec = Spec::load(&args.spec)?;
    let model = Model::load(&args.model, &spec)?;
    let e = pipeline::explain(
        &spec,
        &model,
        (&args.a.0, &args.a.1),
        (&args.b.0, &args.b.1),
    )?;
    println!("{}:{}  vs  {}:{}", args.a.0, args.a.1, args.b.0, args.b.1);
    println!(
        "{:<14} {:<28} {:<28} {:<22} {:>8}",
        "attribute", "value a", "value b", "level", "bits"
    );
    for a in &e.attrs {
        println!(
            "{:<14} {:<28} {:<28} {:<22} {:>+8.2}",
            a.attribute,
            a.value_a.as_deref().unwrap_or("-"),
            a.value_b.as_deref().unwrap_or("-"),
            a.level,
            a.bits
        );
    }
    println!(
        "evidence {:+.4} bits, prior {:+.4} bits, probability {:.6}, decision {}",
        e.evidence,
        e.prior,
        e.probability,
        e.decision.name()
    );
    if e.blocked_by.is_empty() {
        println!("no blocking key puts these records together, so a run never compares them");
    } else {
        println!(
            "compared in a run through blocking key(s): {}",
            e.blocked_by.join(", ")
        );
    }
    Ok(())
}
