//! Refresh: the current sources and the store's previous state in, one new run out
//! (a [`RunRecord`] for the store and a [`RefreshSummary`] for people).
//!
//! [`link_in_memory`] runs the linkage stages (read, block, compare, score, cluster)
//! without writing files and returns records, kept edges and cluster labels: the
//! narrow interface a refresh needs from the pipeline. [`plan_run`] compares the new
//! records with the previous run (added / changed / deleted by a per-record
//! fingerprint), assigns keys with [`crate::keys::inherit`] and lists the crosswalk
//! rows to close and open.

use std::collections::{HashMap, HashSet};

use rayon::prelude::*;

use crate::cluster::{Edge, SpecGuards};
use crate::decide::{Decider, Decision, PairSink, Scored, ScoredPair};
use crate::error::{Error, Result};
use crate::keys::inherit::{inherit, EventKind, PrevKey};
use crate::model::{self, Model};
use crate::prepare::{PrepareOptions, Prepared};
use crate::record::RecordTable;
use crate::score::{score_all, PairScorer};
use crate::sources::{Reject, SourceReport};
use crate::spec::Spec;
use crate::store::{EdgeRow, EventRow, InputRow, Previous, RunRecord};
use crate::util::{stable_hash, Progress};

/// A pair kept after scoring (decided match or review).
#[derive(Debug, Clone, Copy)]
pub struct KeptEdge {
    /// First record (index in the table).
    pub a: u32,
    /// Second record.
    pub b: u32,
    /// Its score and decision.
    pub scored: Scored,
}

/// What linking the current sources gave.
#[derive(Debug)]
pub struct Linked {
    /// The records.
    pub table: RecordTable,
    /// Rows rejected while reading.
    pub rejects: Vec<Reject>,
    /// Per source counts.
    pub reports: Vec<SourceReport>,
    /// The model used.
    pub model: Model,
    /// True when the model was fitted in this run.
    pub fitted: bool,
    /// Match and review pairs.
    pub edges: Vec<KeptEdge>,
    /// Per record, its cluster (the smallest record index in it).
    pub label: Vec<u32>,
}

/// Keeps the match and review pairs of [`score_all`].
struct KeptSink {
    kept: Vec<KeptEdge>,
}

impl PairSink for KeptSink {
    type Chunk = Vec<KeptEdge>;

    fn add(&self, chunk: &mut Vec<KeptEdge>, pair: &ScoredPair) {
        if pair.scored.decision != Decision::NonMatch {
            chunk.push(KeptEdge {
                a: pair.a,
                b: pair.b,
                scored: pair.scored,
            });
        }
    }

    fn flush(&mut self, chunk: Vec<KeptEdge>) -> Result<()> {
        self.kept.extend(chunk);
        Ok(())
    }
}

/// Read, block, compare, score and cluster the spec's sources, in memory. `model`:
/// score with this model; `None`: fit one.
pub fn link_in_memory(spec: &Spec, model: Option<Model>, progress: bool) -> Result<Linked> {
    let prepared = Prepared::new(
        spec,
        PrepareOptions {
            progress,
            pair_limit: true,
            purpose: "a refresh",
        },
    )?;
    let (model, fitted) = match model {
        Some(m) => (m, false),
        None => {
            let bar = Progress::hidden();
            let counts = model::train::count_patterns(
                spec,
                &prepared.table,
                &prepared.blocking,
                &prepared.comparison,
                &prepared.tasks,
                &bar,
            )?;
            (
                model::train::fit_counts(spec, &prepared.table, &prepared.comparison, &counts)?,
                true,
            )
        }
    };
    let scorer = PairScorer::new(
        model::Scorer::new(&model, &prepared.comparison, &prepared.table, &spec.blocks),
        Decider::new(spec.decide),
        prepared.comparison.len(),
    );
    let mut sink = KeptSink { kept: Vec::new() };
    score_all(&prepared, &scorer, &mut sink, &Progress::hidden())?;
    let edges = sink.kept;
    let matches: Vec<Edge> = edges
        .iter()
        .filter(|e| e.scored.decision == Decision::Match)
        .map(|e| Edge {
            a: e.a,
            b: e.b,
            evidence: e.scored.evidence,
            prior: e.scored.prior,
        })
        .collect();
    let guards = SpecGuards::new(spec, &prepared.table, &prepared.comparison);
    let label = guards.cluster(&prepared.table, &matches).label;
    drop(scorer);
    Ok(Linked {
        table: prepared.table,
        rejects: prepared.rejects,
        reports: prepared.reports,
        model,
        fitted,
        edges,
        label,
    })
}

/// Fingerprint of a record: its source, id and every standardized value.
pub fn record_fingerprint(table: &RecordTable, r: usize) -> String {
    let mut bytes = Vec::with_capacity(128);
    bytes.extend_from_slice(table.source_name(r).as_bytes());
    bytes.push(0);
    bytes.extend_from_slice(table.id[r].as_bytes());
    for c in &table.columns {
        bytes.push(0x1f);
        if let Some(v) = c.get(r) {
            bytes.push(1);
            bytes.extend_from_slice(v.as_bytes());
        }
    }
    format!("{:016x}", stable_hash(&bytes))
}

/// Records added, changed and deleted in one source.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct SourceChanges {
    /// Source name.
    pub source: String,
    /// Records now.
    pub records: usize,
    /// New records.
    pub added: usize,
    /// Records whose standardized values changed.
    pub changed: usize,
    /// Records gone from the source.
    pub deleted: usize,
    /// Rows rejected.
    pub rejected: u64,
}

/// What a refresh did (or would do, with `--dry-run`).
#[derive(Debug, Clone, Default)]
pub struct RefreshSummary {
    /// The run id.
    pub run: i64,
    /// The previous run, if any.
    pub previous_run: Option<i64>,
    /// Per source changes (sources of the spec first, then sources that left it).
    pub sources: Vec<SourceChanges>,
    /// Records and customers now.
    pub records: usize,
    /// Customers (clusters).
    pub customers: usize,
    /// Match and review pairs kept.
    pub match_edges: usize,
    /// Review pairs kept.
    pub review_edges: usize,
    /// Crosswalk rows whose key changed (records moved between customers).
    pub moved: usize,
    /// Key events by kind, with up to [`EXAMPLES`] examples each.
    pub events: Vec<(EventKind, usize, Vec<EventRow>)>,
    /// True when the model was fitted in this run.
    pub fitted: bool,
}

/// Examples of each kind of key event in the summary.
pub const EXAMPLES: usize = 3;

/// Compare the linked records with the previous run and build the run to commit.
pub fn plan_run(
    spec_text: &str,
    spec: &Spec,
    prev: &Previous,
    linked: &Linked,
    started_at: String,
) -> Result<(RunRecord, RefreshSummary)> {
    let table = &linked.table;
    let n = table.len();
    let run = prev.last_run.unwrap_or(0) + 1;
    let fps: Vec<String> = (0..n)
        .into_par_iter()
        .map(|r| record_fingerprint(table, r))
        .collect();

    // Previous keys and each current record's previous key.
    let created: HashMap<&str, i64> = prev
        .keys
        .iter()
        .map(|k| (k.key.as_str(), k.created_run))
        .collect();
    let mut live: Vec<&str> = prev.crosswalk.values().map(String::as_str).collect();
    live.sort_unstable();
    live.dedup();
    let index_of: HashMap<&str, u32> = live
        .iter()
        .enumerate()
        .map(|(i, k)| (*k, i as u32))
        .collect();
    let prev_keys: Vec<PrevKey> = live
        .iter()
        .map(|k| PrevKey {
            key: k.to_string(),
            created_run: created.get(k).copied().unwrap_or(0),
        })
        .collect();
    let mut present: HashSet<(&str, &str)> = HashSet::with_capacity(n);
    let mut prev_of = Vec::with_capacity(n);
    for r in 0..n {
        let rec = (table.source_name(r), table.id[r].as_str());
        present.insert(rec);
        prev_of.push(
            prev.crosswalk
                .get(&(rec.0.to_string(), rec.1.to_string()))
                .map(|k| index_of[k.as_str()]),
        );
    }
    let mut order: Vec<u32> = (0..n as u32).collect();
    order.sort_by(|&x, &y| {
        let (x, y) = (x as usize, y as usize);
        (table.source_name(x), table.id[x].as_str())
            .cmp(&(table.source_name(y), table.id[y].as_str()))
    });
    let mut rank = vec![0u32; n];
    for (i, &r) in order.iter().enumerate() {
        rank[r as usize] = i as u32;
    }
    let issued: HashSet<&str> = prev.keys.iter().map(|k| k.key.as_str()).collect();
    let make_key = |r: usize, salt: u32| {
        crate::keys::key_for(table.source_name(r), table.id[r].as_str(), salt)
    };
    let inherited = inherit(
        &prev_keys,
        &prev_of,
        &linked.label,
        &rank,
        &|k| issued.contains(k),
        &make_key,
    );

    // Crosswalk and fingerprint changes, per source counts.
    let mut changes: Vec<SourceChanges> = spec
        .sources
        .iter()
        .zip(&linked.reports)
        .map(|(s, rep)| SourceChanges {
            source: s.name.clone(),
            rejected: rep.rejected,
            ..SourceChanges::default()
        })
        .collect();
    let mut record = RunRecord {
        run,
        ..RunRecord::default()
    };
    let mut moved = 0;
    for r in 0..n {
        let (s, id) = (table.source_name(r), table.id[r].as_str());
        let c = &mut changes[table.source[r] as usize];
        c.records += 1;
        let key = &inherited.key_of_record[r];
        let k = (s.to_string(), id.to_string());
        match prev.crosswalk.get(&k) {
            None => {
                c.added += 1;
                record.open.push((k.0.clone(), k.1.clone(), key.clone()));
            }
            Some(old) if old != key => {
                moved += 1;
                record.close.push(k.clone());
                record.open.push((k.0.clone(), k.1.clone(), key.clone()));
            }
            Some(_) => {}
        }
        match prev.fingerprints.get(&k) {
            Some(f) if *f == fps[r] => {}
            Some(_) => {
                if prev.crosswalk.contains_key(&k) {
                    c.changed += 1;
                }
                record.drop_fingerprints.push(k.clone());
                record.set_fingerprints.push((k.0, k.1, fps[r].clone()));
            }
            None => {
                if prev.crosswalk.contains_key(&k) {
                    c.changed += 1;
                }
                record.set_fingerprints.push((k.0, k.1, fps[r].clone()));
            }
        }
    }
    let mut gone: Vec<&(String, String)> = prev
        .crosswalk
        .keys()
        .filter(|(s, id)| !present.contains(&(s.as_str(), id.as_str())))
        .collect();
    gone.sort();
    for k in gone {
        let c = match changes.iter_mut().position(|c| c.source == k.0) {
            Some(i) => &mut changes[i],
            None => {
                changes.push(SourceChanges {
                    source: k.0.clone(),
                    ..SourceChanges::default()
                });
                changes.last_mut().expect("just pushed")
            }
        };
        c.deleted += 1;
        record.close.push(k.clone());
        if prev.fingerprints.contains_key(k) {
            record.drop_fingerprints.push(k.clone());
        }
    }
    // Fingerprints of records that are no longer in the crosswalk (left earlier).
    let mut stale: Vec<&(String, String)> = prev
        .fingerprints
        .keys()
        .filter(|k| {
            !prev.crosswalk.contains_key(*k) && !present.contains(&(k.0.as_str(), k.1.as_str()))
        })
        .collect();
    stale.sort();
    record.drop_fingerprints.extend(stale.into_iter().cloned());

    // Inputs per source: a fingerprint over its records' fingerprints in id order.
    let mut per_source: Vec<Vec<(&str, &str)>> = vec![Vec::new(); spec.sources.len()];
    for r in 0..n {
        per_source[table.source[r] as usize].push((table.id[r].as_str(), fps[r].as_str()));
    }
    record.inputs = spec
        .sources
        .iter()
        .zip(&linked.reports)
        .zip(per_source.iter_mut())
        .map(|((s, rep), recs)| {
            recs.sort_unstable();
            let mut bytes = Vec::new();
            for (id, f) in recs.iter() {
                bytes.extend_from_slice(id.as_bytes());
                bytes.push(0);
                bytes.extend_from_slice(f.as_bytes());
                bytes.push(b'\n');
            }
            InputRow {
                source: s.name.clone(),
                fingerprint: format!("{:016x}", stable_hash(&bytes)),
                rows: rep.rows as i64,
                records: rep.accepted as i64,
                rejected: rep.rejected as i64,
            }
        })
        .collect();

    let model_text = toml::to_string_pretty(&linked.model)
        .map_err(|e| Error::Internal(format!("cannot serialize the model: {e}")))?;
    record.started_at = started_at;
    record.spec_fingerprint = format!("{:016x}", stable_hash(spec_text.as_bytes()));
    record.model_fingerprint = format!("{:016x}", stable_hash(model_text.as_bytes()));
    record.model_spec_fingerprint = spec.model_fingerprint();
    if linked.fitted {
        record.new_model = Some(model_text);
    }
    let customers = inherited.key_of_record.iter().collect::<HashSet<_>>().len();
    record.records = n as i64;
    record.customers = customers as i64;
    let edge_row = |e: &KeptEdge| EdgeRow {
        a: (
            table.source_name(e.a as usize).to_string(),
            table.id[e.a as usize].clone(),
        ),
        b: (
            table.source_name(e.b as usize).to_string(),
            table.id[e.b as usize].clone(),
        ),
        weight: e.scored.evidence,
        probability: e.scored.probability,
        decision: e.scored.decision.name().to_string(),
    };
    record.edges = linked.edges.iter().map(edge_row).collect();
    record.match_edges = linked
        .edges
        .iter()
        .filter(|e| e.scored.decision == Decision::Match)
        .count() as i64;
    record.review_edges = linked.edges.len() as i64 - record.match_edges;
    record.new_keys = inherited.new_keys.clone();
    record.retired_keys = inherited.retired.clone();
    record.events = inherited
        .events
        .iter()
        .map(|e| EventRow {
            run,
            key: e.key.clone(),
            event: e.kind.name().to_string(),
            other: e.other.clone(),
            records: e.records as i64,
        })
        .collect();
    record.added = changes.iter().map(|c| c.added as i64).sum();
    record.changed = changes.iter().map(|c| c.changed as i64).sum();
    record.deleted = changes.iter().map(|c| c.deleted as i64).sum();

    let events = [
        EventKind::Created,
        EventKind::MergedInto,
        EventKind::SplitFrom,
        EventKind::Retired,
    ]
    .into_iter()
    .map(|kind| {
        let of_kind: Vec<EventRow> = record
            .events
            .iter()
            .filter(|e| e.event == kind.name())
            .cloned()
            .collect();
        let count = of_kind.len();
        (kind, count, of_kind.into_iter().take(EXAMPLES).collect())
    })
    .collect();
    let summary = RefreshSummary {
        run,
        previous_run: prev.last_run,
        sources: changes,
        records: n,
        customers,
        match_edges: record.match_edges as usize,
        review_edges: record.review_edges as usize,
        moved,
        events,
        fitted: linked.fitted,
    };
    Ok((record, summary))
}
