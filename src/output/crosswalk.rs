//! `crosswalk.csv` and `refused.csv`: matched pairs in (as clustering edges), the
//! crosswalk of customer keys and the merges the guards refused out. Also reads the
//! matched pairs back from a shard's `pairs.csv` for `merge`.

use std::collections::HashMap;
use std::path::Path;

use crate::cluster::{Clusters, Edge};
use crate::csvio::CsvTable;
use crate::decide::Decision;
use crate::decide::{PairSink, ScoredPair};
use crate::error::{Error, Result};
use crate::keys::Keys;
use crate::record::RecordTable;

use super::{Staging, PAIR_COLUMNS};

/// The header of `crosswalk.csv`.
pub const CROSSWALK_COLUMNS: [&str; 3] = ["source", "source_id", "customer_key"];

/// The header of `refused.csv`.
pub const REFUSED_COLUMNS: [&str; 6] = [
    "source_a",
    "id_a",
    "source_b",
    "id_b",
    "evidence_bits",
    "reason",
];

/// Collects the matched pairs as clustering edges, with their evidence and prior.
#[derive(Debug, Default)]
pub struct MatchEdges {
    /// The edges, in task order.
    pub edges: Vec<Edge>,
}

impl PairSink for MatchEdges {
    type Chunk = Vec<Edge>;

    fn add(&self, chunk: &mut Vec<Edge>, p: &ScoredPair) {
        if p.decision() == Decision::Match {
            chunk.push(Edge {
                a: p.a,
                b: p.b,
                evidence: p.scored.evidence,
                prior: p.scored.prior,
            });
        }
    }

    fn flush(&mut self, chunk: Vec<Edge>) -> Result<()> {
        self.edges.extend(chunk);
        Ok(())
    }
}

/// Stage what clustering gave: `crosswalk.csv` with each record's customer key and
/// `refused.csv` (`unique` names the spec's unique attributes); returns the keys.
pub fn write_clusters(
    staging: &mut Staging,
    table: &RecordTable,
    clusters: &Clusters,
    unique: &[String],
) -> Result<Keys> {
    let keys = crate::keys::assign(table, &clusters.label);
    write_crosswalk(staging, table, &keys)?;
    write_refused(staging, table, clusters, unique)?;
    Ok(keys)
}

/// Stage `crosswalk.csv`: one row per record with its customer key.
pub fn write_crosswalk(staging: &mut Staging, table: &RecordTable, keys: &Keys) -> Result<()> {
    let mut w = staging.csv("crosswalk.csv")?;
    w.row(&CROSSWALK_COLUMNS)?;
    for r in 0..table.len() {
        w.row(&[table.source_name(r), table.id[r].as_str(), keys.key(r)])?;
    }
    w.finish()
}

/// Stage `refused.csv`: the matched pairs whose merge a guard refused, with the reason
/// (`unique` names the spec's unique attributes, for the reasons' wording).
pub fn write_refused(
    staging: &mut Staging,
    table: &RecordTable,
    clusters: &Clusters,
    unique: &[String],
) -> Result<()> {
    let mut w = staging.csv("refused.csv")?;
    w.row(&REFUSED_COLUMNS)?;
    for (e, why) in &clusters.refused {
        let (a, b) = (e.a as usize, e.b as usize);
        w.row(&[
            table.source_name(a),
            table.id[a].as_str(),
            table.source_name(b),
            table.id[b].as_str(),
            &format!("{:.4}", e.evidence),
            &why.reason(unique),
        ])?;
    }
    w.finish()
}

/// The matched pairs of a shard's `pairs.csv` as clustering edges; every record must be
/// one of `table`'s (same spec and data).
pub fn read_match_edges(path: &Path, table: &RecordTable) -> Result<Vec<Edge>> {
    let mut index: HashMap<(&str, &str), u32> = HashMap::with_capacity(table.len());
    for r in 0..table.len() {
        index.insert((table.source_name(r), table.id[r].as_str()), r as u32);
    }
    let mut rdr = CsvTable::open(path, false)?;
    // The columns of PAIR_COLUMNS: records 0-3, evidence 4, prior 5, decision 7.
    let cols = rdr.columns(&PAIR_COLUMNS)?;
    let (dcol, bits) = (
        cols[7],
        [(cols[4], "evidence_bits"), (cols[5], "prior_bits")],
    );
    let mut edges = Vec::new();
    rdr.for_each_row(|line, row| {
        if row.get(dcol) != Some(Decision::Match.name()) {
            return Ok(());
        }
        let rec = |s: usize, i: usize| {
            let key = (
                row.get(cols[s]).unwrap_or(""),
                row.get(cols[i]).unwrap_or(""),
            );
            index.get(&key).copied().ok_or_else(|| {
                Error::input(
                    path,
                    format!(
                        "line {line}: record `{}:{}` is not in the sources of this spec; \
                         merge shards of the same spec and data",
                        key.0, key.1
                    ),
                )
            })
        };
        let (a, b) = (rec(0, 1)?, rec(2, 3)?);
        let [evidence, prior] = bits.map(|(col, name)| {
            row.get(col)
                .and_then(|w| w.parse::<f64>().ok())
                .ok_or_else(|| Error::input(path, format!("line {line}: `{name}` is not a number")))
        });
        edges.push(Edge {
            a,
            b,
            evidence: evidence?,
            prior: prior?,
        });
        Ok(())
    })?;
    Ok(edges)
}
