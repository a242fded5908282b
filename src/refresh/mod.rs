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
use crate::decide::{Decider, Decision, PairSink, ScoredPair};
use crate::error::{Error, Result};
use crate::keys::inherit::{inherit, EventKind, PrevKey};
use crate::model::{self, Model};
use crate::prepare::{PrepareOptions, Prepared};
use crate::record::RecordTable;
use crate::score::{score_all, PairScorer};
use crate::sources::{Reject, SourceReport};
use crate::spec::Spec;
use crate::store::{EdgeRow, EventRow, InputRow, Previous, RunRecord};
use crate::util::{stable_hash, Progress, Timings};
use std::time::Instant;

/// Largest share of the records that may be new, changed or deleted for a refresh to
/// link incrementally; above it a full re-link is about as fast.
pub const INCREMENTAL_MAX_SHARE: f64 = 0.2;

/// A pair kept after scoring (decided match or review), its records in table order
/// (`a < b`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct KeptEdge {
    /// First record (index in the table).
    pub a: u32,
    /// Second record.
    pub b: u32,
    /// Match weight (evidence, log2 likelihood ratio).
    pub weight: f64,
    /// Log2 prior odds of the blocking key that found the pair (clustering orders
    /// pairs by prior + weight).
    pub prior: f64,
    /// Match probability.
    pub probability: f64,
    /// `Match` or `Review`.
    pub decision: Decision,
}

/// How a refresh linked the records.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum LinkMode {
    /// Every candidate pair was compared.
    Full {
        /// Why (first run, `--full`, a changed spec or model, many changes, ...).
        reason: String,
    },
    /// Only the pairs of new and changed records were compared; the stored edges of the
    /// other pairs were reused.
    Incremental {
        /// Records new or changed since the last run.
        changed: usize,
        /// Records deleted since the last run.
        deleted: usize,
        /// Candidate pairs compared.
        compared: u64,
        /// Stored edges reused.
        reused: usize,
    },
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
    /// Match and review pairs, sorted by `(a, b)`.
    pub edges: Vec<KeptEdge>,
    /// Per record, its cluster (the smallest record index in it).
    pub label: Vec<u32>,
    /// Per record, its fingerprint ([`record_fingerprint`]).
    pub fingerprints: Vec<String>,
    /// Per record, true when it is new or changed since the last run.
    pub changed: Vec<bool>,
    /// Fingerprint of what decides a pair's score ([`link_fingerprint`]).
    pub link_fingerprint: String,
    /// How the records were linked.
    pub mode: LinkMode,
    /// Wall time per stage.
    pub timings: Timings,
}

/// Keeps the match and review pairs of [`score_all`].
struct KeptSink {
    kept: Vec<KeptEdge>,
}

impl PairSink for KeptSink {
    type Chunk = Vec<KeptEdge>;

    fn add(&self, chunk: &mut Vec<KeptEdge>, pair: &ScoredPair) {
        if let Some(e) = kept(pair) {
            chunk.push(e);
        }
    }

    fn flush(&mut self, chunk: Vec<KeptEdge>) -> Result<()> {
        self.kept.extend(chunk);
        Ok(())
    }
}

/// The pair as a kept edge, unless it is a non-match.
fn kept(pair: &ScoredPair) -> Option<KeptEdge> {
    (pair.scored.decision != Decision::NonMatch).then(|| KeptEdge {
        a: pair.a.min(pair.b),
        b: pair.a.max(pair.b),
        weight: pair.scored.evidence,
        prior: pair.scored.prior,
        probability: pair.scored.probability,
        decision: pair.scored.decision,
    })
}

/// How to link for a refresh.
#[derive(Debug, Clone, Copy)]
pub struct LinkOptions<'a> {
    /// The spec file's text (part of the link fingerprint).
    pub spec_text: &'a str,
    /// Show progress on stderr.
    pub progress: bool,
    /// Compare every candidate pair even when few records changed.
    pub full: bool,
}

/// Fingerprint of what decides a pair's score and decision: samekey's version, the
/// spec's text and the model. Stored edges are reused only under the same one.
pub fn link_fingerprint(spec_text: &str, model: &Model) -> Result<String> {
    let model_text = toml::to_string_pretty(model)
        .map_err(|e| Error::Internal(format!("cannot serialize the model: {e}")))?;
    let text = format!("{}\0{spec_text}\0{model_text}", env!("CARGO_PKG_VERSION"));
    Ok(format!("{:016x}", stable_hash(text.as_bytes())))
}

/// Read, block, compare, score and cluster the spec's sources, in memory. `model`:
/// score with this model; `None`: fit one.
///
/// When the store's last run was linked under the same link fingerprint and few records
/// are new, changed or deleted (compared by [`record_fingerprint`] with
/// `prev.fingerprints`), only the candidate pairs with a new or changed record are
/// compared (in the blocks those records are in); the edges of the other pairs are the
/// stored ones (`stored_edges`, read only then), and clustering runs over all edges.
/// The result is the same as comparing every pair: an unchanged pair of unchanged
/// records has the same comparison vector, blocking key and score.
pub fn link_in_memory(
    spec: &Spec,
    model: Option<Model>,
    opts: LinkOptions<'_>,
    prev: &Previous,
    stored_edges: &mut dyn FnMut() -> Result<Vec<EdgeRow>>,
) -> Result<Linked> {
    let prepared = Prepared::new(
        spec,
        PrepareOptions {
            progress: opts.progress,
            pair_limit: true,
            purpose: "a refresh",
        },
    )?;
    let mut timings = prepared.timings.clone();
    let mut clock = Instant::now();
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
    let table = &prepared.table;
    let n = table.len();
    let fingerprints: Vec<String> = (0..n)
        .into_par_iter()
        .map(|r| record_fingerprint(table, r))
        .collect();
    let changed: Vec<bool> = (0..n)
        .into_par_iter()
        .map(|r| {
            let k = (table.source_name(r).to_string(), table.id[r].clone());
            prev.fingerprints.get(&k) != Some(&fingerprints[r])
        })
        .collect();
    let link_fp = link_fingerprint(opts.spec_text, &model)?;
    let n_changed = changed.iter().filter(|&&c| c).count();
    // Records of the last run that are gone (only their number matters here).
    let deleted = {
        let present: HashSet<(&str, &str)> = (0..n)
            .map(|r| (table.source_name(r), table.id[r].as_str()))
            .collect();
        prev.crosswalk
            .keys()
            .filter(|(s, id)| !present.contains(&(s.as_str(), id.as_str())))
            .count()
    };
    let share = (n_changed + deleted) as f64 / n.max(1) as f64;
    clock = timings.record("fit, fingerprints", clock);
    let full_reason = if opts.full {
        Some("--full".to_string())
    } else if fitted {
        Some("the model was fitted in this run".to_string())
    } else if prev.last_run.is_none() {
        Some("first run".to_string())
    } else if prev.link_fingerprint.is_empty() {
        Some("the last run was written by an older samekey".to_string())
    } else if prev.link_fingerprint != link_fp {
        Some("the spec, the model or samekey's version changed since the last run".to_string())
    } else if spec.compares.iter().any(|c| c.frequency) {
        Some("value-frequency weights depend on every record".to_string())
    } else if share > INCREMENTAL_MAX_SHARE {
        Some(format!(
            "{:.1}% of the records are new, changed or deleted (incremental up to {:.0}%)",
            share * 100.0,
            INCREMENTAL_MAX_SHARE * 100.0
        ))
    } else {
        None
    };
    let scorer = PairScorer::new(
        model::Scorer::new(&model, &prepared.comparison, table, &spec.blocks),
        Decider::new(spec.decide),
        prepared.comparison.len(),
    );
    let (mut edges, mode) = match full_reason {
        Some(reason) => {
            let mut sink = KeptSink { kept: Vec::new() };
            score_all(&prepared, &scorer, &mut sink, &Progress::hidden())?;
            clock = timings.record("score all pairs", clock);
            (sink.kept, LinkMode::Full { reason })
        }
        None => {
            let (mut edges, compared) = score_changed(&prepared, &scorer, &changed);
            clock = timings.record("score pairs of changed records", clock);
            let stored = stored_edges()?;
            clock = timings.record("read stored edges", clock);
            let reused = reuse_edges(&prepared, &scorer, &changed, &stored);
            drop(stored);
            let mode = LinkMode::Incremental {
                changed: n_changed,
                deleted,
                compared,
                reused: reused.len(),
            };
            edges.extend(reused);
            (edges, mode)
        }
    };
    edges.par_sort_unstable_by_key(|e| (e.a, e.b));
    edges.dedup_by_key(|e| (e.a, e.b));
    let matches: Vec<Edge> = edges
        .iter()
        .filter(|e| e.decision == Decision::Match)
        .map(|e| Edge {
            a: e.a,
            b: e.b,
            evidence: e.weight,
            prior: e.prior,
        })
        .collect();
    let guards = SpecGuards::new(spec, table, &prepared.comparison);
    let label = guards.cluster(table, &matches).label;
    timings.record("cluster", clock);
    drop(scorer);
    Ok(Linked {
        table: prepared.table,
        rejects: prepared.rejects,
        reports: prepared.reports,
        model,
        fitted,
        edges,
        label,
        fingerprints,
        changed,
        link_fingerprint: link_fp,
        mode,
        timings,
    })
}

/// Compare the candidate pairs that have a changed record (`changed[r]`): in each
/// blocking key, the record with every other member of its block, unless an earlier key
/// already puts the two together (as [`crate::block::Blocking::for_each_pair`] does).
/// Returns the kept edges and the number of pairs compared.
fn score_changed(
    prepared: &Prepared,
    scorer: &PairScorer<'_>,
    changed: &[bool],
) -> (Vec<KeptEdge>, u64) {
    let (table, blocking, comparison) = (&prepared.table, &prepared.blocking, &prepared.comparison);
    let dirty: Vec<u32> = (0..changed.len() as u32)
        .filter(|&r| changed[r as usize])
        .collect();
    let parts: Vec<(Vec<KeptEdge>, u64)> = dirty
        .par_chunks(256)
        .map(|chunk| {
            let mut kept_edges = Vec::new();
            let mut compared = 0u64;
            let mut scratch = comparison.scratch();
            for &d in chunk {
                for (key, kb) in blocking.keys.iter().enumerate() {
                    let block = kb.key_of[d as usize];
                    if block == crate::block::NO_KEY {
                        continue;
                    }
                    for &x in kb.block(block as usize) {
                        // A pair of two changed records is compared once, from the
                        // smaller.
                        if x == d || (changed[x as usize] && x < d) {
                            continue;
                        }
                        let (a, b) = (d.min(x), d.max(x));
                        if blocking.seen_before(key, a, b) {
                            continue;
                        }
                        compared += 1;
                        let g = comparison.gamma(table, a, b, &mut scratch);
                        if let Some(e) = kept(&scorer.score_pair(Some(key), a, b, g)) {
                            kept_edges.push(e);
                        }
                    }
                }
            }
            (kept_edges, compared)
        })
        .collect();
    let compared = parts.iter().map(|p| p.1).sum();
    (parts.into_iter().flat_map(|p| p.0).collect(), compared)
}

/// The stored edges whose two records are still there and unchanged, as kept edges of
/// the current table. The prior is the one of the first blocking key that puts the two
/// together, the key that found the pair (see [`score_changed`]).
fn reuse_edges(
    prepared: &Prepared,
    scorer: &PairScorer<'_>,
    changed: &[bool],
    stored: &[EdgeRow],
) -> Vec<KeptEdge> {
    let (table, blocking) = (&prepared.table, &prepared.blocking);
    let index: HashMap<(&str, &str), u32> = (0..table.len())
        .map(|r| ((table.source_name(r), table.id[r].as_str()), r as u32))
        .collect();
    let find = |(s, id): &(String, String)| {
        index
            .get(&(s.as_str(), id.as_str()))
            .copied()
            .filter(|&r| !changed[r as usize])
    };
    stored
        .par_iter()
        .filter_map(|e| {
            let (x, y) = (find(&e.a)?, find(&e.b)?);
            let decision = match e.decision.as_str() {
                "match" => Decision::Match,
                "review" => Decision::Review,
                _ => return None,
            };
            let key = blocking.keys.iter().position(|kb| {
                let k = kb.key_of[x as usize];
                k != crate::block::NO_KEY && k == kb.key_of[y as usize]
            })?;
            Some(KeptEdge {
                a: x.min(y),
                b: x.max(y),
                weight: e.weight,
                prior: scorer.prior(Some(key)),
                probability: e.probability,
                decision,
            })
        })
        .collect()
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
#[derive(Debug, Clone)]
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
    /// How the records were linked.
    pub mode: LinkMode,
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
    let fps = &linked.fingerprints;

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
    let mut gone_records = Vec::new();
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
        gone_records.push(k.clone());
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
        weight: e.weight,
        probability: e.probability,
        decision: e.decision.name().to_string(),
    };
    record.link_fingerprint = linked.link_fingerprint.clone();
    match linked.mode {
        LinkMode::Full { .. } => {
            record.edges = linked.edges.par_iter().map(edge_row).collect();
        }
        LinkMode::Incremental { .. } => {
            // Only the edges of changed records are new; the stored edges of changed
            // and deleted records are dropped, the others stay.
            let changed = &linked.changed;
            record.incremental = true;
            record.edges = linked
                .edges
                .par_iter()
                .filter(|e| changed[e.a as usize] || changed[e.b as usize])
                .map(edge_row)
                .collect();
            let mut dropped: Vec<(String, String)> = (0..n)
                .filter(|&r| changed[r])
                .map(|r| (table.source_name(r).to_string(), table.id[r].clone()))
                .filter(|k| prev.fingerprints.contains_key(k))
                .collect();
            dropped.extend(gone_records);
            record.edges_dropped = Some(dropped);
        }
    }
    record.match_edges = linked
        .edges
        .iter()
        .filter(|e| e.decision == Decision::Match)
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
        mode: linked.mode.clone(),
    };
    Ok((record, summary))
}
