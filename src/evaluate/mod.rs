//! Evaluate: a truth file and a crosswalk (and optionally candidate pairs) in,
//! linkage quality scores out.
//!
//! **In:**
//! * truth CSV with header `source,source_id,entity_id` ([`read_truth`]);
//! * crosswalk CSV with header `source,source_id,customer_key` ([`read_crosswalk`]);
//! * optionally a pairs CSV with columns `source_a,id_a,source_b,id_b` (further
//!   columns are ignored; all are found by header name) ([`read_pairs`]).
//!
//! Header names and values are trimmed of surrounding blanks; extra columns are
//! allowed in every file.
//!
//! **Out:** [`Metrics`] — pairwise precision/recall/F1 over the record pairs that
//! the clusters imply, B-cubed precision/recall/F1 (Bagga & Baldwin 1998), the
//! adjusted Rand index (Hubert & Arabie 1985, as in scikit-learn's
//! `adjusted_rand_score`), entity and record counts, and, with pairs, blocking pair
//! completeness and reduction ratio ([`BlockingMetrics`], Christen 2012).
//!
//! All cluster scores come from the contingency table of (predicted cluster, true
//! entity) counts, so they cost O(records) and never enumerate pairs.
//!
//! # Records that are in only one file
//!
//! The truth file defines the records being scored. A truth record missing from the
//! crosswalk is scored as a predicted cluster of its own (it was never linked, so
//! every true pair it belongs to is a missed link). A crosswalk record missing from
//! the truth cannot be scored and is left out. Both are counted in [`Metrics`] with
//! a few examples, so a caller can warn about them.
//!
//! # Conventions for empty denominators
//!
//! Precision with no predicted pairs, recall with no true pairs, and B-cubed scores
//! of zero records are 1 (nothing was claimed, or nothing could be missed); F1 is 0
//! when precision and recall are both 0. The adjusted Rand index is 1 when both
//! partitions imply exactly the same pairs, as in scikit-learn.

use std::collections::{HashMap, HashSet};
use std::hash::BuildHasherDefault;
use std::path::Path;

use crate::csvio::CsvTable;
use crate::util::stable_hash;
use crate::{Error, Result};

/// How many example records the metrics keep for warnings.
pub const EXAMPLES: usize = 5;

/// One record: its source system and its id there.
#[derive(Debug, Clone, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct RecordRef {
    /// Source system name.
    pub source: String,
    /// Record id within the source.
    pub source_id: String,
}

impl std::fmt::Display for RecordRef {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}/{}", self.source, self.source_id)
    }
}

type Mix = BuildHasherDefault<crate::util::MixHasher>;

const NONE: u32 = u32::MAX;

/// Byte strings ↦ dense ids `0..len`, each string stored once in one buffer
/// (memory grows with the bytes of the keys, not with per-key allocations).
#[derive(Debug, Clone, Default)]
struct Interner {
    buf: Vec<u8>,
    ends: Vec<usize>,
    /// Key hash ↦ most recent id with that hash; `next` chains the others.
    heads: HashMap<u64, u32, Mix>,
    next: Vec<u32>,
}

impl Interner {
    fn len(&self) -> usize {
        self.ends.len()
    }

    fn key(&self, i: usize) -> &[u8] {
        let start = if i == 0 { 0 } else { self.ends[i - 1] };
        &self.buf[start..self.ends[i]]
    }

    fn get(&self, key: &[u8]) -> Option<u32> {
        self.get_hashed(stable_hash(key), key)
    }

    fn get_hashed(&self, hash: u64, key: &[u8]) -> Option<u32> {
        let mut i = *self.heads.get(&hash)?;
        while i != NONE {
            if self.key(i as usize) == key {
                return Some(i);
            }
            i = self.next[i as usize];
        }
        None
    }

    /// Id of `key`, added if new; the flag says whether it was new.
    fn intern(&mut self, key: &[u8]) -> Result<(u32, bool)> {
        self.intern_hashed(stable_hash(key), key)
    }

    fn intern_hashed(&mut self, hash: u64, key: &[u8]) -> Result<(u32, bool)> {
        if let Some(i) = self.get_hashed(hash, key) {
            return Ok((i, false));
        }
        let id = u32::try_from(self.len())
            .ok()
            .filter(|&i| i != NONE)
            .ok_or_else(|| Error::Usage("more than 4,294,967,294 distinct values".into()))?;
        self.buf.extend_from_slice(key);
        self.ends.push(self.buf.len());
        let head = self.heads.insert(hash, id).unwrap_or(NONE);
        self.next.push(head);
        Ok((id, true))
    }
}

/// Record key bytes: source, 0xFF, source id. 0xFF never occurs in UTF-8, so the
/// split is unambiguous.
fn record_key(buf: &mut Vec<u8>, source: &str, source_id: &str) {
    buf.clear();
    buf.extend_from_slice(source.as_bytes());
    buf.push(0xFF);
    buf.extend_from_slice(source_id.as_bytes());
}

/// Records assigned to groups: true entities (truth file) or predicted customers
/// (crosswalk).
#[derive(Debug, Clone, Default)]
pub struct Grouping {
    /// Record keys in file order; the id is the record's position.
    records: Interner,
    /// Group id per record.
    group: Vec<u32>,
    groups: Interner,
}

impl Grouping {
    /// Build from `(source, source_id, group)` rows. Fails on a repeated record.
    pub fn from_rows<I, S>(rows: I) -> Result<Grouping>
    where
        I: IntoIterator<Item = (S, S, S)>,
        S: AsRef<str>,
    {
        let mut g = Grouping::default();
        let mut key = Vec::new();
        for (i, (source, id, group)) in rows.into_iter().enumerate() {
            let (source, id) = (source.as_ref(), id.as_ref());
            if let Some(first) = g.insert(&mut key, source, id, group.as_ref())? {
                return Err(Error::Usage(format!(
                    "record `{source}/{id}` appears twice (rows {} and {})",
                    first + 1,
                    i + 1
                )));
            }
        }
        Ok(g)
    }

    /// Add a record; returns the position of an earlier copy (not added then).
    fn insert(
        &mut self,
        key: &mut Vec<u8>,
        source: &str,
        source_id: &str,
        group: &str,
    ) -> Result<Option<usize>> {
        record_key(key, source, source_id);
        let (pos, new) = self.records.intern(key)?;
        if !new {
            return Ok(Some(pos as usize));
        }
        let (gid, _) = self.groups.intern(group.as_bytes())?;
        self.group.push(gid);
        Ok(None)
    }

    /// Number of records.
    pub fn len(&self) -> usize {
        self.group.len()
    }

    /// True when there are no records.
    pub fn is_empty(&self) -> bool {
        self.group.is_empty()
    }

    /// Number of distinct groups.
    pub fn n_groups(&self) -> usize {
        self.groups.len()
    }

    /// The record at position `pos` (file order).
    pub fn record(&self, pos: usize) -> Option<RecordRef> {
        if pos >= self.len() {
            return None;
        }
        let key = self.records.key(pos);
        let cut = key.iter().position(|&b| b == 0xFF).unwrap_or(key.len());
        Some(RecordRef {
            source: String::from_utf8_lossy(&key[..cut]).into_owned(),
            source_id: String::from_utf8_lossy(key.get(cut + 1..).unwrap_or_default()).into_owned(),
        })
    }

    /// Position of a record, if present.
    pub fn position(&self, source: &str, source_id: &str) -> Option<usize> {
        let mut key = Vec::new();
        record_key(&mut key, source, source_id);
        self.records.get(&key).map(|p| p as usize)
    }

    /// Group name of the record at position `pos`.
    pub fn group_of(&self, pos: usize) -> Option<&str> {
        let g = *self.group.get(pos)?;
        std::str::from_utf8(self.groups.key(g as usize)).ok()
    }

    /// Group number (0-based, in order of first appearance) of the record at `pos`.
    pub fn group_index(&self, pos: usize) -> Option<u32> {
        self.group.get(pos).copied()
    }

    /// True when the records at positions `a` and `b` are in the same group.
    pub fn same_group(&self, a: usize, b: usize) -> bool {
        self.group.get(a).is_some() && self.group.get(a) == self.group.get(b)
    }
}

/// Distinct candidate pairs read from a pairs file, as positions in the truth file.
#[derive(Debug, Clone, Default)]
pub struct CandidatePairs {
    pairs: HashSet<u64, Mix>,
    /// Data rows read.
    pub rows: u64,
    /// Rows repeating a pair already seen (either order).
    pub duplicate_rows: u64,
    /// Rows pairing a record with itself.
    pub self_pair_rows: u64,
    /// Rows naming a record that is not in the truth file.
    pub unknown_record_rows: u64,
    /// A few records not in the truth file, for warnings.
    pub unknown_examples: Vec<RecordRef>,
}

impl CandidatePairs {
    /// Add the pair of truth positions `a`, `b`; returns false for a self pair or a
    /// repeat (counted, not added).
    pub fn insert(&mut self, a: usize, b: usize) -> bool {
        self.rows += 1;
        if a == b {
            self.self_pair_rows += 1;
            return false;
        }
        let (lo, hi) = (a.min(b) as u64, a.max(b) as u64);
        if self.pairs.insert(lo << 32 | hi) {
            true
        } else {
            self.duplicate_rows += 1;
            false
        }
    }

    /// Number of distinct candidate pairs.
    pub fn len(&self) -> usize {
        self.pairs.len()
    }

    /// True when there is no candidate pair.
    pub fn is_empty(&self) -> bool {
        self.pairs.is_empty()
    }

    /// Distinct pairs as truth positions (unordered).
    pub fn iter(&self) -> impl Iterator<Item = (usize, usize)> + '_ {
        self.pairs
            .iter()
            .map(|&k| ((k >> 32) as usize, (k & 0xFFFF_FFFF) as usize))
    }
}

/// Precision, recall and F1.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scores {
    /// Precision.
    pub precision: f64,
    /// Recall.
    pub recall: f64,
    /// Harmonic mean of precision and recall.
    pub f1: f64,
}

impl Scores {
    fn new(precision: f64, recall: f64) -> Scores {
        let f1 = if precision + recall > 0.0 {
            2.0 * precision * recall / (precision + recall)
        } else {
            0.0
        };
        Scores {
            precision,
            recall,
            f1,
        }
    }
}

/// Pairwise counts and scores over the record pairs implied by the clusters.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PairwiseMetrics {
    /// Pairs in the same true entity.
    pub true_pairs: u64,
    /// Pairs in the same predicted cluster.
    pub predicted_pairs: u64,
    /// Pairs in the same cluster and the same entity.
    pub true_positives: u64,
    /// precision = TP / predicted pairs, recall = TP / true pairs.
    pub scores: Scores,
}

/// Blocking quality of a candidate pair set (Christen 2012).
#[derive(Debug, Clone, PartialEq)]
pub struct BlockingMetrics {
    /// Distinct candidate pairs between truth records.
    pub candidate_pairs: u64,
    /// All record pairs n(n − 1)/2 among the truth records.
    pub all_pairs: u64,
    /// True matched pairs (same entity).
    pub true_pairs: u64,
    /// True matched pairs among the candidates.
    pub true_pairs_found: u64,
    /// Pair completeness = true pairs found / true pairs (1 with no true pairs).
    pub pair_completeness: f64,
    /// Reduction ratio = 1 − candidate pairs / all pairs (1 with no pairs at all).
    pub reduction_ratio: f64,
    /// Pair quality = true pairs found / candidate pairs (1 with no candidates).
    pub pair_quality: f64,
    /// Rows in the pairs file.
    pub rows: u64,
    /// Rows repeating an earlier pair.
    pub duplicate_rows: u64,
    /// Rows pairing a record with itself.
    pub self_pair_rows: u64,
    /// Rows naming a record missing from the truth file (ignored).
    pub unknown_record_rows: u64,
    /// A few of those records.
    pub unknown_examples: Vec<RecordRef>,
}

/// Linkage quality of a crosswalk against the truth.
#[derive(Debug, Clone, PartialEq)]
pub struct Metrics {
    /// Records scored (the truth records).
    pub records: usize,
    /// Distinct true entities.
    pub true_entities: usize,
    /// Distinct predicted clusters among the scored records (a truth record absent
    /// from the crosswalk counts as its own cluster).
    pub predicted_entities: usize,
    /// Truth records absent from the crosswalk (scored as singletons).
    pub missing_from_crosswalk: usize,
    /// A few of them.
    pub missing_from_crosswalk_examples: Vec<RecordRef>,
    /// Crosswalk records absent from the truth (not scored).
    pub missing_from_truth: usize,
    /// A few of them.
    pub missing_from_truth_examples: Vec<RecordRef>,
    /// Pairwise scores.
    pub pairwise: PairwiseMetrics,
    /// B-cubed scores (Bagga & Baldwin 1998), averaged over records.
    pub bcubed: Scores,
    /// Adjusted Rand index (Hubert & Arabie 1985).
    pub adjusted_rand_index: f64,
    /// Blocking scores, when candidate pairs were given.
    pub blocking: Option<BlockingMetrics>,
}

fn comb2(x: u64) -> u64 {
    x * x.saturating_sub(1) / 2
}

fn ratio(num: u64, den: u64) -> f64 {
    if den == 0 {
        1.0
    } else {
        num as f64 / den as f64
    }
}

/// Score `crosswalk` against `truth` (see the module docs for records in only one
/// of them). Sets `blocking` to `None`; see [`blocking_metrics`].
pub fn evaluate(truth: &Grouping, crosswalk: &Grouping) -> Metrics {
    let n = truth.len();
    // Predicted cluster per truth record; absent records get ids past the
    // crosswalk's groups, one each.
    let base = crosswalk.n_groups();
    let mut missing_cw = Vec::new();
    let mut missing_count = 0usize;
    let mut predicted: Vec<usize> = Vec::with_capacity(n);
    for i in 0..n {
        match crosswalk.records.get(truth.records.key(i)) {
            Some(p) => predicted.push(crosswalk.group[p as usize] as usize),
            None => {
                missing_count += 1;
                if missing_cw.len() < EXAMPLES {
                    missing_cw.extend(truth.record(i));
                }
                predicted.push(base + i);
            }
        }
    }
    let mut missing_tr = Vec::new();
    let mut missing_tr_count = 0usize;
    for i in 0..crosswalk.len() {
        if truth.records.get(crosswalk.records.key(i)).is_none() {
            missing_tr_count += 1;
            if missing_tr.len() < EXAMPLES {
                missing_tr.extend(crosswalk.record(i));
            }
        }
    }

    // Contingency table (predicted cluster, true entity) and margins.
    let mut cells: HashMap<u64, u64, Mix> = HashMap::with_capacity_and_hasher(n, Mix::default());
    let mut a = vec![0u64; base + n]; // predicted cluster sizes
    let mut b = vec![0u64; truth.n_groups()]; // true entity sizes
    for (i, &p) in predicted.iter().enumerate() {
        let t = truth.group[i];
        *cells.entry((p as u64) << 32 | t as u64).or_insert(0) += 1;
        a[p] += 1;
        b[t as usize] += 1;
    }

    let tp: u64 = cells.values().map(|&c| comb2(c)).sum();
    let predicted_pairs: u64 = a.iter().map(|&c| comb2(c)).sum();
    let true_pairs: u64 = b.iter().map(|&c| comb2(c)).sum();
    let pairwise = PairwiseMetrics {
        true_pairs,
        predicted_pairs,
        true_positives: tp,
        scores: Scores::new(ratio(tp, predicted_pairs), ratio(tp, true_pairs)),
    };

    // B-cubed: Σ_r |C(r) ∩ T(r)| / |C(r)| = Σ_cells c² / a_cluster.
    let (mut bp, mut br) = (0.0, 0.0);
    for (&cell, &c) in &cells {
        let (p, t) = ((cell >> 32) as usize, (cell & 0xFFFF_FFFF) as usize);
        let c = c as f64;
        bp += c * c / a[p] as f64;
        br += c * c / b[t] as f64;
    }
    let bcubed = if n == 0 {
        Scores::new(1.0, 1.0)
    } else {
        Scores::new(bp / n as f64, br / n as f64)
    };

    Metrics {
        records: n,
        true_entities: truth.n_groups(),
        predicted_entities: a.iter().filter(|&&c| c > 0).count(),
        missing_from_crosswalk: missing_count,
        missing_from_crosswalk_examples: missing_cw,
        missing_from_truth: missing_tr_count,
        missing_from_truth_examples: missing_tr,
        pairwise,
        bcubed,
        adjusted_rand_index: adjusted_rand_index(tp, predicted_pairs, true_pairs, n as u64),
        blocking: None,
    }
}

/// ARI from pair counts, as scikit-learn computes it from `pair_confusion_matrix`:
/// 2 (TP·TN − FN·FP) / ((TP + FN)(FN + TN) + (TP + FP)(FP + TN)).
fn adjusted_rand_index(tp: u64, predicted_pairs: u64, true_pairs: u64, n: u64) -> f64 {
    let all = comb2(n) as i128;
    let tp = tp as i128;
    let fp = predicted_pairs as i128 - tp;
    let fn_ = true_pairs as i128 - tp;
    let tn = all - tp - fp - fn_;
    if fp == 0 && fn_ == 0 {
        return 1.0;
    }
    let num = 2 * (tp * tn - fn_ * fp);
    let den = (tp + fn_) * (fn_ + tn) + (tp + fp) * (fp + tn);
    num as f64 / den as f64
}

/// Blocking quality of `pairs` against the true entities of `truth`.
pub fn blocking_metrics(truth: &Grouping, pairs: &CandidatePairs) -> BlockingMetrics {
    let mut sizes = vec![0u64; truth.n_groups()];
    for &g in &truth.group {
        sizes[g as usize] += 1;
    }
    let true_pairs: u64 = sizes.iter().map(|&c| comb2(c)).sum();
    let found = pairs
        .iter()
        .filter(|&(a, b)| truth.same_group(a, b))
        .count() as u64;
    let candidates = pairs.len() as u64;
    let all = comb2(truth.len() as u64);
    BlockingMetrics {
        candidate_pairs: candidates,
        all_pairs: all,
        true_pairs,
        true_pairs_found: found,
        pair_completeness: ratio(found, true_pairs),
        reduction_ratio: 1.0
            - if all == 0 {
                0.0
            } else {
                ratio(candidates, all)
            },
        pair_quality: ratio(found, candidates),
        rows: pairs.rows,
        duplicate_rows: pairs.duplicate_rows,
        self_pair_rows: pairs.self_pair_rows,
        unknown_record_rows: pairs.unknown_record_rows,
        unknown_examples: pairs.unknown_examples.clone(),
    }
}

// ---------------------------------------------------------------------------
// Readers
// ---------------------------------------------------------------------------

fn read_grouping(path: &Path, group_col: &str) -> Result<Grouping> {
    let wanted = ["source", "source_id", group_col];
    let mut table = CsvTable::open(path, true)?;
    let mut g = Grouping::default();
    // Line of every record, to point at the first copy of a repeated record.
    let mut lines: Vec<u64> = Vec::new();
    let mut key = Vec::new();
    table.for_each_filled(&wanted, |line, v| {
        if let Some(first) = g.insert(&mut key, v[0], v[1], v[2])? {
            return Err(Error::input(
                path,
                format!(
                    "line {line}: record `{}`/`{}` already appeared on line {}; each \
                     (source, source_id) may appear once",
                    v[0], v[1], lines[first]
                ),
            ));
        }
        lines.push(line);
        Ok(())
    })?;
    Ok(g)
}

/// Read a truth file (`source,source_id,entity_id`). Errors name the file, the line
/// and what was expected: missing columns (listing the header found), empty values,
/// Each record's entity number from a truth file; records missing from the truth get
/// an entity of their own.
pub fn entities_from_truth(table: &crate::record::RecordTable, truth: &Grouping) -> Vec<u32> {
    let mut next = truth.n_groups() as u32;
    (0..table.len())
        .map(|r| {
            truth
                .position(table.source_name(r), &table.id[r])
                .and_then(|pos| truth.group_index(pos))
                .unwrap_or_else(|| {
                    next += 1;
                    next
                })
        })
        .collect()
}

/// repeated records, malformed CSV.
pub fn read_truth(path: impl AsRef<Path>) -> Result<Grouping> {
    read_grouping(path.as_ref(), "entity_id")
}

/// Read a crosswalk (`source,source_id,customer_key`); errors as [`read_truth`].
pub fn read_crosswalk(path: impl AsRef<Path>) -> Result<Grouping> {
    read_grouping(path.as_ref(), "customer_key")
}

/// Read candidate pairs (`source_a,id_a,source_b,id_b`, other columns ignored) and
/// map them to records of `truth`. Pairs naming a record absent from `truth`,
/// self pairs and repeated pairs are counted, not kept.
pub fn read_pairs(path: impl AsRef<Path>, truth: &Grouping) -> Result<CandidatePairs> {
    let path = path.as_ref();
    let wanted = ["source_a", "id_a", "source_b", "id_b"];
    let mut table = CsvTable::open(path, true)?;
    let mut pairs = CandidatePairs::default();
    let mut key = Vec::new();
    table.for_each_filled(&wanted, |_, v| {
        let mut lookup = |s: &str, id: &str| {
            record_key(&mut key, s, id);
            truth.records.get(&key).map(|p| p as usize)
        };
        match (lookup(v[0], v[1]), lookup(v[2], v[3])) {
            (Some(a), Some(b)) => {
                pairs.insert(a, b);
            }
            (a, b) => {
                pairs.rows += 1;
                pairs.unknown_record_rows += 1;
                for (found, s, id) in [(a, v[0], v[1]), (b, v[2], v[3])] {
                    if found.is_none() && pairs.unknown_examples.len() < EXAMPLES {
                        pairs.unknown_examples.push(RecordRef {
                            source: s.to_owned(),
                            source_id: id.to_owned(),
                        });
                    }
                }
            }
        }
        Ok(())
    })?;
    Ok(pairs)
}

/// Pair-level quality of the `match` decisions in a pairs file, against the truth.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct DecisionMetrics {
    /// Pairs in the file.
    pub pairs: u64,
    /// Pairs in the file that are true matches.
    pub true_pairs: u64,
    /// Pairs decided `match`.
    pub match_pairs: u64,
    /// Pairs decided `match` that are true matches.
    pub match_true: u64,
    /// match_true / match_pairs.
    pub precision: f64,
    /// match_true / true_pairs: recall among the pairs in the file (the candidates).
    pub recall: f64,
}

/// Score the `decision` column of a pairs file (`source_a,id_a,source_b,id_b,...,decision`).
pub fn decision_metrics(path: impl AsRef<Path>, truth: &Grouping) -> Result<DecisionMetrics> {
    let path = path.as_ref();
    let wanted = ["source_a", "id_a", "source_b", "id_b", "decision"];
    let mut table = CsvTable::open(path, true)?;
    let mut m = DecisionMetrics::default();
    table.for_each_filled(&wanted, |_, v| {
        let same = match (truth.position(v[0], v[1]), truth.position(v[2], v[3])) {
            (Some(a), Some(b)) => truth.same_group(a, b),
            _ => false,
        };
        m.pairs += 1;
        m.true_pairs += same as u64;
        if v[4] == "match" {
            m.match_pairs += 1;
            m.match_true += same as u64;
        }
        Ok(())
    })?;
    let ratio = |a: u64, b: u64| if b == 0 { 1.0 } else { a as f64 / b as f64 };
    m.precision = ratio(m.match_true, m.match_pairs);
    m.recall = ratio(m.match_true, m.true_pairs);
    Ok(m)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;
    use std::io::Write;

    /// A grouping of records `r0, r1, ...` in source `s` with the given labels.
    fn labels(groups: &[u32]) -> Grouping {
        Grouping::from_rows(
            groups
                .iter()
                .enumerate()
                .map(|(i, g)| ("s".to_owned(), format!("r{i}"), format!("g{g}"))),
        )
        .unwrap()
    }

    fn close(what: &str, got: f64, want: f64) {
        assert!(
            (got - want).abs() < 1e-12,
            "{what}: expected {want}, got {got}"
        );
    }

    /// Hand-computed: truth {a,b,c},{d,e},{f}; predicted {a,b},{c,d,e},{f}.
    /// True pairs 3 + 1 = 4, predicted pairs 1 + 3 = 4, shared pairs ab and de = 2:
    /// P = R = F1 = 0.5 (scikit-learn 1.9.1 `pair_confusion_matrix` gives
    /// [[18, 4], [4, 4]] in ordered pairs, the same). B-cubed per record
    /// (P, R): a, b (1, 2/3); c (1/3, 1/3); d, e (2/3, 1); f (1, 1), so both average
    /// to 14/18 = 7/9. ARI 0.318181818181818 (scikit-learn 1.9.1
    /// `adjusted_rand_score`).
    #[test]
    fn hand_example() {
        let m = evaluate(&labels(&[0, 0, 0, 1, 1, 2]), &labels(&[0, 0, 1, 1, 1, 2]));
        assert_eq!(m.records, 6);
        assert_eq!((m.true_entities, m.predicted_entities), (3, 3));
        assert_eq!(m.pairwise.true_pairs, 4);
        assert_eq!(m.pairwise.predicted_pairs, 4);
        assert_eq!(m.pairwise.true_positives, 2);
        close("P", m.pairwise.scores.precision, 0.5);
        close("R", m.pairwise.scores.recall, 0.5);
        close("F1", m.pairwise.scores.f1, 0.5);
        close("B3 P", m.bcubed.precision, 7.0 / 9.0);
        close("B3 R", m.bcubed.recall, 7.0 / 9.0);
        close("B3 F1", m.bcubed.f1, 7.0 / 9.0);
        close("ARI", m.adjusted_rand_index, 0.318181818181818);
        assert_eq!(m.missing_from_crosswalk + m.missing_from_truth, 0);
        assert!(m.blocking.is_none());
    }

    /// Values from scikit-learn 1.9.1: `adjusted_rand_score(t, p)` and
    /// `pair_confusion_matrix(t, p)` (ordered pairs; halved here), with
    /// precision = C[1,1] / (C[1,1] + C[0,1]) and recall = C[1,1] / (C[1,1] + C[1,0]).
    #[test]
    fn scikit_learn_values() {
        /// (truth, predicted, ARI, TP, FP, FN)
        type Case<'a> = (&'a [u32], &'a [u32], f64, u64, u64, u64);
        let cases: [Case<'_>; 4] = [
            (
                &[0, 0, 0, 1, 1, 2, 3, 3, 3, 3, 4, 5, 5, 6, 7, 7, 7, 8, 9, 9],
                &[0, 0, 1, 1, 1, 2, 3, 3, 4, 4, 5, 6, 6, 6, 7, 7, 8, 8, 9, 10],
                0.422993492407809,
                6,
                5,
                9,
            ),
            // All singletons predicted: sklearn gives precision nan (0/0); we use 1.
            (&[0, 0, 0, 1, 1, 2], &[0, 1, 2, 3, 4, 5], 0.0, 0, 0, 4),
            // Everything in one cluster.
            (&[0, 0, 0, 1, 1, 2], &[0, 0, 0, 0, 0, 0], 0.0, 4, 11, 0),
            // Identical partitions, relabelled.
            (&[0, 0, 1, 2, 2, 2], &[5, 5, 3, 4, 4, 4], 1.0, 4, 0, 0),
        ];
        for (t, p, ari, tp, fp, fn_) in cases {
            let m = evaluate(&labels(t), &labels(p));
            close("ARI", m.adjusted_rand_index, ari);
            assert_eq!(m.pairwise.true_positives, tp, "{t:?} {p:?}");
            assert_eq!(m.pairwise.predicted_pairs - tp, fp, "{t:?} {p:?}");
            assert_eq!(m.pairwise.true_pairs - tp, fn_, "{t:?} {p:?}");
            let want_p = if tp + fp == 0 {
                1.0
            } else {
                tp as f64 / (tp + fp) as f64
            };
            close("P", m.pairwise.scores.precision, want_p);
            close("R", m.pairwise.scores.recall, tp as f64 / (tp + fn_) as f64);
        }
        // Spelled out for the first case: P = 6/11 = 0.5454545454545454, R = 0.4.
        let m = evaluate(&labels(cases[0].0), &labels(cases[0].1));
        close("P", m.pairwise.scores.precision, 0.5454545454545454);
        close("R", m.pairwise.scores.recall, 0.4);
    }

    #[test]
    fn records_in_one_file_only() {
        let truth = Grouping::from_rows([
            ("crm", "1", "A"),
            ("crm", "2", "A"),
            ("web", "9", "A"),
            ("web", "3", "B"),
        ])
        .unwrap();
        // web/9 is missing from the crosswalk; shop/7 is not in the truth.
        let cw = Grouping::from_rows([
            ("crm", "1", "K1"),
            ("crm", "2", "K1"),
            ("web", "3", "K2"),
            ("shop", "7", "K2"),
        ])
        .unwrap();
        let m = evaluate(&truth, &cw);
        assert_eq!(m.records, 4);
        assert_eq!(m.missing_from_crosswalk, 1);
        assert_eq!(m.missing_from_crosswalk_examples[0].to_string(), "web/9");
        assert_eq!(m.missing_from_truth, 1);
        assert_eq!(m.missing_from_truth_examples[0].to_string(), "shop/7");
        // Clusters scored: {crm1, crm2}, {web3}, {web9}: 3 predicted entities.
        assert_eq!(m.predicted_entities, 3);
        // True pairs: crm1-crm2, crm1-web9, crm2-web9; only crm1-crm2 predicted.
        assert_eq!(m.pairwise.true_pairs, 3);
        assert_eq!(m.pairwise.true_positives, 1);
        close("P", m.pairwise.scores.precision, 1.0);
        close("R", m.pairwise.scores.recall, 1.0 / 3.0);
    }

    #[test]
    fn interner_resolves_hash_collisions() {
        let mut t = Interner::default();
        // Force every key onto the same hash to exercise the chain.
        for (i, k) in ["a", "b", "", "ab"].iter().enumerate() {
            assert_eq!(t.intern_hashed(7, k.as_bytes()).unwrap(), (i as u32, true));
        }
        for (i, k) in ["a", "b", "", "ab"].iter().enumerate() {
            assert_eq!(t.get_hashed(7, k.as_bytes()), Some(i as u32));
            assert_eq!(t.intern_hashed(7, k.as_bytes()).unwrap(), (i as u32, false));
            assert_eq!(t.key(i), k.as_bytes());
        }
        assert_eq!(t.get_hashed(7, b"c"), None);
        assert_eq!(t.len(), 4);
    }

    #[test]
    fn grouping_gives_records_back() {
        let g = Grouping::from_rows([("crm", "1", "E1"), ("web", "x,y", "E2"), ("", "", "E1")])
            .unwrap();
        assert_eq!((g.len(), g.n_groups()), (3, 2));
        let r = g.record(1).unwrap();
        assert_eq!((r.source.as_str(), r.source_id.as_str()), ("web", "x,y"));
        assert_eq!(g.record(2).unwrap().to_string(), "/");
        assert_eq!(g.position("web", "x,y"), Some(1));
        assert_eq!(g.position("webx", ",y"), None);
        assert_eq!(g.group_of(2), Some("E1"));
        assert!(g.same_group(0, 2) && !g.same_group(0, 1) && !g.same_group(0, 9));
        assert!(g.record(3).is_none());
    }

    #[test]
    fn repeated_record_is_rejected() {
        let e = Grouping::from_rows([("a", "1", "x"), ("a", "1", "y")]).unwrap_err();
        assert!(
            e.to_string().contains("`a/1` appears twice (rows 1 and 2)"),
            "{e}"
        );
    }

    /// Hand-computed: 6 records, 15 pairs; true pairs ab, ac, bc, de (4).
    /// Candidates ab, bc, cd, ef (4): found ab, bc = 2. PC = 2/4, RR = 1 − 4/15,
    /// PQ = 2/4.
    #[test]
    fn blocking_hand_example() {
        let truth = labels(&[0, 0, 0, 1, 1, 2]);
        let mut pairs = CandidatePairs::default();
        for (a, b) in [(0, 1), (2, 1), (2, 3), (4, 5), (1, 0), (3, 3)] {
            pairs.insert(a, b);
        }
        let bm = blocking_metrics(&truth, &pairs);
        assert_eq!(bm.candidate_pairs, 4);
        assert_eq!(bm.all_pairs, 15);
        assert_eq!(bm.true_pairs, 4);
        assert_eq!(bm.true_pairs_found, 2);
        close("PC", bm.pair_completeness, 0.5);
        close("RR", bm.reduction_ratio, 1.0 - 4.0 / 15.0);
        close("PQ", bm.pair_quality, 0.5);
        assert_eq!((bm.rows, bm.duplicate_rows, bm.self_pair_rows), (6, 1, 1));
    }

    #[test]
    fn empty_inputs_use_the_documented_conventions() {
        let m = evaluate(&Grouping::default(), &Grouping::default());
        assert_eq!(m.records, 0);
        assert_eq!(m.pairwise.scores.precision, 1.0);
        assert_eq!(m.bcubed.f1, 1.0);
        assert_eq!(m.adjusted_rand_index, 1.0);
        let bm = blocking_metrics(&Grouping::default(), &CandidatePairs::default());
        assert_eq!((bm.pair_completeness, bm.reduction_ratio), (1.0, 1.0));
    }

    // -- against a naive model -------------------------------------------------

    /// Pairwise counts and B-cubed by enumerating every record pair / record.
    fn naive(t: &[u32], p: &[u32]) -> (u64, u64, u64, f64, f64) {
        let n = t.len();
        let (mut tp, mut pp, mut tt) = (0, 0, 0);
        for i in 0..n {
            for j in i + 1..n {
                let (same_t, same_p) = (t[i] == t[j], p[i] == p[j]);
                tt += same_t as u64;
                pp += same_p as u64;
                tp += (same_t && same_p) as u64;
            }
        }
        let (mut bp, mut br) = (0.0, 0.0);
        for i in 0..n {
            let c: Vec<usize> = (0..n).filter(|&j| p[j] == p[i]).collect();
            let tr: Vec<usize> = (0..n).filter(|&j| t[j] == t[i]).collect();
            let both = c.iter().filter(|j| t[**j] == t[i]).count() as f64;
            bp += both / c.len() as f64;
            br += both / tr.len() as f64;
        }
        (tp, pp, tt, bp / n as f64, br / n as f64)
    }

    fn partitions() -> impl Strategy<Value = (Vec<u32>, Vec<u32>)> {
        (1usize..60, 1u32..12, 1u32..12).prop_flat_map(|(n, kt, kp)| {
            (
                prop::collection::vec(0..kt, n),
                prop::collection::vec(0..kp, n),
            )
        })
    }

    proptest! {
        #[test]
        fn contingency_counts_match_pair_enumeration((t, p) in partitions()) {
            let m = evaluate(&labels(&t), &labels(&p));
            let (tp, pp, tt, bp, br) = naive(&t, &p);
            prop_assert_eq!(m.pairwise.true_positives, tp);
            prop_assert_eq!(m.pairwise.predicted_pairs, pp);
            prop_assert_eq!(m.pairwise.true_pairs, tt);
            prop_assert!((m.bcubed.precision - bp).abs() < 1e-12);
            prop_assert!((m.bcubed.recall - br).abs() < 1e-12);
            for s in [m.pairwise.scores, m.bcubed] {
                for x in [s.precision, s.recall, s.f1] {
                    prop_assert!((0.0..=1.0).contains(&x));
                }
            }
            prop_assert!(m.adjusted_rand_index <= 1.0 + 1e-12);
            // Swapping roles swaps precision and recall; ARI is symmetric.
            let r = evaluate(&labels(&p), &labels(&t));
            prop_assert!((r.bcubed.precision - m.bcubed.recall).abs() < 1e-12);
            prop_assert!((r.adjusted_rand_index - m.adjusted_rand_index).abs() < 1e-12);
            // A perfect crosswalk scores 1 everywhere.
            let same = evaluate(&labels(&t), &labels(&t));
            prop_assert_eq!(same.pairwise.scores.f1, 1.0);
            prop_assert!((same.bcubed.f1 - 1.0).abs() < 1e-12);
            prop_assert_eq!(same.adjusted_rand_index, 1.0);
        }

        #[test]
        fn blocking_counts_match_enumeration(
            (t, _) in partitions(),
            raw in prop::collection::vec((0usize..60, 0usize..60), 0..80),
        ) {
            let n = t.len();
            let truth = labels(&t);
            let mut pairs = CandidatePairs::default();
            let mut model = std::collections::BTreeSet::new();
            for &(a, b) in &raw {
                let (a, b) = (a % n, b % n);
                pairs.insert(a, b);
                if a != b {
                    model.insert((a.min(b), a.max(b)));
                }
            }
            let bm = blocking_metrics(&truth, &pairs);
            prop_assert_eq!(bm.candidate_pairs, model.len() as u64);
            let found = model.iter().filter(|(a, b)| t[*a] == t[*b]).count() as u64;
            prop_assert_eq!(bm.true_pairs_found, found);
            prop_assert!(bm.true_pairs_found <= bm.true_pairs);
            prop_assert!((0.0..=1.0).contains(&bm.reduction_ratio));
        }
    }

    // -- readers ------------------------------------------------------------

    fn file(text: &str) -> tempfile::NamedTempFile {
        let mut f = tempfile::NamedTempFile::new().unwrap();
        f.write_all(text.as_bytes()).unwrap();
        f
    }

    #[test]
    fn reads_truth_crosswalk_and_pairs_by_header_name() {
        let truth = file("entity_id, source ,source_id,note\nE1,crm,1,x\nE1,web,a7,\nE2,crm,2,\n");
        let truth = read_truth(truth.path()).unwrap();
        assert_eq!(truth.len(), 3);
        assert_eq!(truth.n_groups(), 2);
        assert_eq!(truth.position("web", "a7"), Some(1));
        let cw = file("source,source_id,customer_key\ncrm,1,K1\nweb,a7,K1\ncrm,2,K1\n");
        let cw = read_crosswalk(cw.path()).unwrap();
        let m = evaluate(&truth, &cw);
        assert_eq!(m.pairwise.true_positives, 1);
        assert_eq!(m.pairwise.predicted_pairs, 3);
        let pairs = file(
            "source_a,id_a,source_b,id_b,evidence_bits\n\
             crm,1,web,a7,12.5\n\
             web,a7,crm,1,12.5\n\
             crm,2,crm,1,-3\n\
             crm,2,shop,99,0\n",
        );
        let pairs = read_pairs(pairs.path(), &truth).unwrap();
        assert_eq!(pairs.len(), 2);
        assert_eq!(pairs.rows, 4);
        assert_eq!(pairs.duplicate_rows, 1);
        assert_eq!(pairs.unknown_record_rows, 1);
        assert_eq!(pairs.unknown_examples[0].to_string(), "shop/99");
        let bm = blocking_metrics(&truth, &pairs);
        close("PC", bm.pair_completeness, 1.0);
        close("RR", bm.reduction_ratio, 1.0 - 2.0 / 3.0);
    }

    #[test]
    fn reader_errors_name_file_line_and_expectation() {
        let f = file("source,id,entity\ncrm,1,E1\n");
        let e = read_truth(f.path()).unwrap_err();
        let msg = e.to_string();
        assert!(e.is_bad_input());
        assert!(msg.contains(&f.path().display().to_string()), "{msg}");
        assert!(msg.contains("missing column `source_id`"), "{msg}");
        assert!(msg.contains("found `source`, `id`, `entity`"), "{msg}");

        let f = file("source,source_id,entity_id\ncrm,1,E1\ncrm,,E2\n");
        let msg = read_truth(f.path()).unwrap_err().to_string();
        assert!(msg.contains("line 3: empty `source_id`"), "{msg}");

        let f = file("source,source_id,customer_key\ncrm,1,K\nweb,1,K\ncrm,1,K\n");
        let msg = read_crosswalk(f.path()).unwrap_err().to_string();
        assert!(
            msg.contains("line 4: record `crm`/`1` already appeared on line 2"),
            "{msg}"
        );

        let f = file("source,source_id,entity_id\ncrm,1,E1\ncrm,2\n");
        let e = read_truth(f.path()).unwrap_err();
        assert!(e.is_bad_input());
        let msg = e.to_string();
        assert!(
            msg.contains("line 3: the row has 2 fields, the header has 3"),
            "{msg}"
        );

        let f = file("");
        let msg = read_truth(f.path()).unwrap_err().to_string();
        assert!(msg.contains("no header"), "{msg}");

        let e = read_truth("/nonexistent/truth.csv").unwrap_err();
        assert!(matches!(e, Error::Io { .. }) && e.is_bad_input());

        let truth = labels(&[0, 1]);
        let f = file("source_a,id_a,source_b\ns,r0,s\n");
        let msg = read_pairs(f.path(), &truth).unwrap_err().to_string();
        assert!(msg.contains("missing column `id_b`"), "{msg}");
    }
}
