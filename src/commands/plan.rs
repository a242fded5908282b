//! `samekey plan`: estimate candidate pairs per blocking key before comparing anything.

use std::path::PathBuf;

use samekey::block::{self, Blocking};
use samekey::evaluate;
use samekey::sources;

use super::Global;

/// Arguments of `samekey plan`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The linkage spec (TOML).
    #[arg(long)]
    pub spec: PathBuf,
    /// Truth file (`source,source_id,entity_id`): adds pair completeness per key.
    #[arg(long)]
    pub truth: Option<PathBuf>,
    /// How many of the largest blocks to list per key.
    #[arg(long, default_value_t = 5, allow_negative_numbers = true, value_parser = super::values::count)]
    pub top: usize,
    /// Print the plan as JSON.
    #[arg(long)]
    pub json: bool,
}

/// Run `samekey plan`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let spec = super::values::load_spec(&args.spec)?;
    let loaded = sources::load(&spec.sources)?;
    let table = &loaded.table;
    let blocking = Blocking::build(table, &spec.blocks, u64::MAX)?;
    let entity: Option<Vec<u32>> = match &args.truth {
        None => None,
        Some(p) => Some(samekey::evaluate::entities_from_truth(
            table,
            &evaluate::read_truth(p)?,
        )),
    };
    let plans = block::plan(&blocking, entity.as_deref(), args.top);
    let n = table.len() as u64;
    let all = n * n.saturating_sub(1) / 2;
    if global.quiet {
        return Ok(());
    }
    if args.json {
        let limit = spec.model.max_pairs_per_key;
        let total: u64 = plans.iter().map(|p| p.new_pairs).sum();
        let v = serde_json::json!({
            "command": "plan",
            "records": n,
            "record_pairs": all,
            "estimated_candidate_pairs": total,
            "reduction_ratio": 1.0 - total as f64 / all.max(1) as f64,
            "max_pairs_per_key": limit,
            "keys": plans.iter().map(|p| serde_json::json!({
                "key": p.name,
                "records": p.records_keyed,
                "blocks": p.blocks,
                "pairs": p.raw_pairs,
                "new_pairs_estimated": p.new_pairs,
                "completeness": p.completeness,
                "cumulative_completeness": p.cumulative_completeness,
                "over_limit": p.raw_pairs > limit,
                "largest_blocks": p.largest.iter().map(|(v, n)| serde_json::json!({"value": v, "records": n})).collect::<Vec<_>>(),
            })).collect::<Vec<_>>(),
        });
        println!("{}", serde_json::to_string_pretty(&v)?);
        return Ok(());
    }
    println!("{} records, {} record pairs in all\n", n, all);
    println!(
        "{:<20} {:>9} {:>8} {:>14} {:>14} {:>9} {:>9}",
        "key", "records", "blocks", "pairs", "new (est.)", "compl.", "cum."
    );
    let limit = spec.model.max_pairs_per_key;
    for p in &plans {
        let pct = |x: Option<f64>| x.map_or("-".to_string(), |v| format!("{:.4}", v));
        println!(
            "{:<20} {:>9} {:>8} {:>14} {:>14} {:>9} {:>9}{}",
            p.name,
            p.records_keyed,
            p.blocks,
            p.raw_pairs,
            p.new_pairs,
            pct(p.completeness),
            pct(p.cumulative_completeness),
            if p.raw_pairs > limit {
                "  OVER LIMIT"
            } else {
                ""
            }
        );
    }
    let total: u64 = plans.iter().map(|p| p.new_pairs).sum();
    println!(
        "\nestimated candidate pairs: {total} (reduction ratio {:.6})",
        1.0 - total as f64 / all.max(1) as f64
    );
    for p in &plans {
        let top: Vec<String> = p
            .largest
            .iter()
            .map(|(v, n)| format!("`{v}` {n}"))
            .collect();
        println!("largest blocks of {}: {}", p.name, top.join(", "));
    }
    if let Some(p) = plans.iter().find(|p| p.raw_pairs > limit) {
        println!(
            "\nkey `{}` exceeds model.max_pairs_per_key ({limit}); `link` will refuse it. Add a \
             part to the key (for example prefix(postcode, 3)) or use a longer prefix.",
            p.name
        );
    }
    Ok(())
}
