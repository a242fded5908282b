//! `samekey export`: the store's current crosswalk and key events as CSV files.

use std::path::PathBuf;

use samekey::output::Staging;
use samekey::store::Store;

use super::Global;

/// Arguments of `samekey export`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// The run store (a SQLite file, `sqlite:PATH` or `postgres://...`).
    #[arg(long, value_name = "URL")]
    pub store: String,
    /// Output folder for crosswalk.csv and key_events.csv.
    #[arg(long)]
    pub out: PathBuf,
    /// Only key events of runs after this run id (default: all runs).
    #[arg(long, value_name = "RUN", default_value_t = 0)]
    pub events_since: i64,
    /// Print the summary as JSON instead of text.
    #[arg(long)]
    pub json: bool,
}

/// Run `samekey export`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    if args.events_since < 0 {
        return Err(samekey::Error::Usage(format!(
            "--events-since {}: give a run id (0 or more; 0 exports the events of every run)",
            args.events_since
        ))
        .into());
    }
    let location = args.store.trim();
    let is_file_store = !location.contains("://") && !location.starts_with("sqlite:");
    if is_file_store && !std::path::Path::new(location).is_file() {
        return Err(samekey::Error::Usage(format!(
            "store `{location}` does not exist; run `samekey refresh` first (or give the store \
             a refresh wrote)"
        ))
        .into());
    }
    let mut store = Store::open(location)?;
    let runs = store.runs()?;
    let Some(last) = runs.last() else {
        return Err(samekey::Error::Usage(format!(
            "store `{}` holds no run yet; run `samekey refresh` first",
            store.location()
        ))
        .into());
    };
    let last_run = last.0;
    let crosswalk = store.current_crosswalk()?;
    let events = store.events_since(args.events_since)?;
    let mut staging = Staging::new(&args.out)?;
    let mut w = staging.csv("crosswalk.csv")?;
    w.row(&["source", "source_id", "customer_key"])?;
    for row in &crosswalk {
        w.row(row)?;
    }
    w.finish()?;
    let mut w = staging.csv("key_events.csv")?;
    w.row(&["run", "customer_key", "event", "other_key", "records"])?;
    for e in &events {
        w.row(&[
            e.run.to_string(),
            e.key.clone(),
            e.event.clone(),
            e.other.clone().unwrap_or_default(),
            e.records.to_string(),
        ])?;
    }
    w.finish()?;
    let outputs = staging.commit()?;
    if !global.quiet && args.json {
        let json = serde_json::json!({
            "run": last_run,
            "store": store.location(),
            "crosswalk_rows": crosswalk.len(),
            "key_events": events.len(),
            "events_since": args.events_since,
            "files": outputs.iter().map(|p| p.display().to_string()).collect::<Vec<_>>(),
        });
        println!("{}", serde_json::to_string_pretty(&json)?);
    } else if !global.quiet {
        println!(
            "exported run {last_run} of store `{}`: {} crosswalk rows, {} key events (runs after \
             {})",
            store.location(),
            crosswalk.len(),
            events.len(),
            args.events_since
        );
        for p in outputs {
            println!("  {}", p.display());
        }
    }
    Ok(())
}
