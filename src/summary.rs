//! Summary: what a run did, in types for the commands' text output and in the JSON of
//! `summary.json` (written into `link`'s output folder) and of `--json`.
//!
//! The JSON is built here, at the edge, from plain types; no internal type derives
//! `Serialize`. Every run gets a run id ([`run_id`]) that ties `summary.json` to the
//! files written beside it.

use std::path::PathBuf;

use serde_json::{json, Value};

use crate::block::Blocking;
use crate::decide::{Decider, Decision, Estimate};
use crate::model::Model;
use crate::sources::SourceReport;
use crate::standardize::StdStats;
use crate::util::Timings;

/// Candidate pairs of one blocking key.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct KeySummary {
    /// Key name.
    pub name: String,
    /// Pairs inside the key's blocks.
    pub raw_pairs: u64,
    /// Pairs first produced by this key (compared).
    pub new_pairs: u64,
    /// Number of blocks.
    pub blocks: usize,
    /// Largest block size.
    pub largest_block: usize,
}

impl KeySummary {
    /// Per blocking key of `blocking`: its pairs and blocks, and `new_pairs[k]` pairs it
    /// produced first.
    pub fn of(blocking: &Blocking, new_pairs: &[u64]) -> Vec<KeySummary> {
        blocking
            .keys
            .iter()
            .zip(new_pairs)
            .map(|(kb, &new_pairs)| KeySummary {
                name: kb.name.clone(),
                raw_pairs: kb.raw_pairs(),
                new_pairs,
                blocks: kb.len(),
                largest_block: kb.largest(1).first().map_or(0, |x| x.1),
            })
            .collect()
    }
}

/// What a run did.
#[derive(Debug, Clone)]
pub struct RunSummary {
    /// The run's id (see [`run_id`]).
    pub run_id: String,
    /// Per source: rows read, accepted, rejected.
    pub sources: Vec<SourceReport>,
    /// Standardization counts.
    pub std_stats: StdStats,
    /// Records linked.
    pub records: usize,
    /// Per blocking key.
    pub keys: Vec<KeySummary>,
    /// The model used.
    pub model: Model,
    /// True when the model was fitted in this run (false: loaded with `--model`).
    pub fitted: bool,
    /// The decision thresholds (as log2 odds).
    pub decider: Decider,
    /// The model's own estimate of precision and recall at the match threshold.
    pub estimate: Estimate,
    /// Pairs per decision, indexed by `Decision as usize`: match, review, non_match.
    pub decisions: [u64; 3],
    /// Customers (clusters) found (0 for a shard run).
    pub customers: usize,
    /// The shard scored, if the run was one shard of several.
    pub shard: Option<(usize, usize)>,
    /// Merges refused by the clustering guards.
    pub refused_merges: usize,
    /// Files written.
    pub outputs: Vec<PathBuf>,
    /// Wall time per stage.
    pub timings: Timings,
}

impl RunSummary {
    /// All candidate pairs compared.
    pub fn candidate_pairs(&self) -> u64 {
        self.keys.iter().map(|k| k.new_pairs).sum()
    }
}

/// What `merge` did.
#[derive(Debug, Clone)]
pub struct MergeSummary {
    /// Shards merged.
    pub shards: usize,
    /// Records linked.
    pub records: usize,
    /// Matched pairs read from the shards.
    pub match_pairs: u64,
    /// Customers found.
    pub customers: usize,
    /// Merges refused by the guards.
    pub refused_merges: usize,
    /// Files written.
    pub outputs: Vec<PathBuf>,
}

/// A run id: the UTC start time and a random suffix, e.g. `20261203T230455Z-3f9a1c`.
/// Sorts by time; two runs in the same second differ in the suffix.
pub fn run_id() -> String {
    let now = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .unwrap_or_default();
    let secs = now.as_secs();
    let (y, m, d) = crate::util::civil::civil_from_days((secs / 86_400) as i64);
    let t = secs % 86_400;
    let salt = crate::util::mix64(now.as_nanos() as u64 ^ (u64::from(std::process::id()) << 32));
    format!(
        "{y:04}{m:02}{d:02}T{:02}{:02}{:02}Z-{:06x}",
        t / 3600,
        t / 60 % 60,
        t % 60,
        salt >> 40
    )
}

fn file_names(paths: &[PathBuf]) -> Vec<String> {
    paths
        .iter()
        .filter_map(|p| p.file_name().map(|n| n.to_string_lossy().into_owned()))
        .collect()
}

fn timings_json(t: &Timings) -> Value {
    json!({
        "stages": t.stages.iter().map(|(s, d)| json!({"stage": s, "seconds": d.as_secs_f64()})).collect::<Vec<_>>(),
        "total_seconds": t.total().as_secs_f64(),
        "process_cpu_seconds": t.process_cpu.map(|d| d.as_secs_f64()),
    })
}

fn sources_json(sources: &[SourceReport]) -> Value {
    Value::Array(
        sources
            .iter()
            .map(|r| json!({"source": r.name, "rows": r.rows, "records": r.accepted, "rejected": r.rejected}))
            .collect(),
    )
}

impl RunSummary {
    /// The summary as JSON (the content of `summary.json`).
    pub fn to_json(&self) -> Value {
        let n = self.records as u64;
        let all = n * n.saturating_sub(1) / 2;
        let cand = self.candidate_pairs();
        let decisions: serde_json::Map<String, Value> = Decision::ALL
            .iter()
            .map(|d| (d.name().to_string(), json!(self.decisions[*d as usize])))
            .collect();
        json!({
            "run_id": self.run_id,
            "command": "link",
            "samekey_version": env!("CARGO_PKG_VERSION"),
            "shard": self.shard.map(|(i, n)| json!({"index": i + 1, "of": n})),
            "sources": sources_json(&self.sources),
            "records": self.records,
            "blocking": {
                "keys": self.keys.iter().map(|k| json!({
                    "key": k.name,
                    "pairs": k.raw_pairs,
                    "new_pairs": k.new_pairs,
                    "blocks": k.blocks,
                    "largest_block": k.largest_block,
                })).collect::<Vec<_>>(),
                "candidate_pairs": cand,
                "record_pairs": all,
                "reduction_ratio": 1.0 - cand as f64 / all.max(1) as f64,
            },
            "model": {
                "fitted": self.fitted,
                "lambda": self.model.lambda,
                "prior_bits": crate::decide::prior_log2_odds(self.model.lambda),
                "em_iterations": self.model.iterations(),
                "warnings": self.model.warnings,
            },
            "decide": {
                "match_at": self.decider.match_at(),
                "review_at": self.decider.review_at(),
            },
            "estimate": {
                "precision": self.estimate.precision,
                "recall": self.estimate.recall,
            },
            "decisions": decisions,
            "customers": self.customers,
            "refused_merges": self.refused_merges,
            "outputs": file_names(&self.outputs),
            "timings": timings_json(&self.timings),
        })
    }
}

impl MergeSummary {
    /// The summary as JSON.
    pub fn to_json(&self) -> Value {
        json!({
            "command": "merge",
            "samekey_version": env!("CARGO_PKG_VERSION"),
            "shards": self.shards,
            "records": self.records,
            "match_pairs": self.match_pairs,
            "customers": self.customers,
            "refused_merges": self.refused_merges,
            "outputs": file_names(&self.outputs),
        })
    }
}

/// The JSON of `train`: the fitted model's headline numbers and per attribute its
/// levels with their bits.
pub fn train_json(
    model: &Model,
    sources: &[SourceReport],
    out: &std::path::Path,
    oracle: bool,
) -> Value {
    json!({
        "command": "train",
        "samekey_version": env!("CARGO_PKG_VERSION"),
        "fit": if oracle { "oracle (from true labels)" } else { "EM" },
        "sources": sources_json(sources),
        "records": model.records,
        "candidate_pairs": model.candidate_pairs,
        "lambda": model.lambda,
        "prior_bits": crate::decide::prior_log2_odds(model.lambda),
        "em_iterations": model.iterations(),
        "attributes": model.attribute.iter().map(|a| json!({
            "attribute": a.attribute,
            "levels": a.levels.iter().zip(&a.weight).map(|(l, w)| json!({"level": l, "bits": w})).collect::<Vec<_>>(),
        })).collect::<Vec<_>>(),
        "warnings": model.warnings,
        "model_file": out.display().to_string(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn run_ids_sort_by_time_and_differ() {
        let (a, b) = (run_id(), run_id());
        assert_eq!(a.len(), "20261203T230455Z-3f9a1c".len(), "{a}");
        assert_eq!(&a[8..9], "T");
        assert_eq!(&a[15..17], "Z-");
        assert_ne!(a, b);
    }
}
