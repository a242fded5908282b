//! Training: a spec's sources in, a fitted [`Model`] out.
//!
//! Pass 1 of a run ([`count_patterns`]) compares the candidate pairs once and counts
//! their comparison vectors per blocking key; [`fit_counts`] fits the model from those
//! counts without labels. [`train`] does both from a spec, and [`train_oracle`] fits the
//! same kind of model from true labels instead, to measure how close the unsupervised
//! fit comes.

use rayon::prelude::*;

use super::em::PatternCounts;
use super::{KeyCounts, Model};
use crate::block::{Blocking, Task};
use crate::compare::Comparison;
use crate::error::{Error, Result};
use crate::prepare::Prepared;
use crate::record::RecordTable;
use crate::sources::SourceReport;
use crate::spec::Spec;
use crate::util::Progress;

/// The fit without labels from the comparison vector counts of pass 1 ([`super::fit`]).
pub fn fit_counts(
    spec: &Spec,
    table: &RecordTable,
    comparison: &Comparison,
    counts: &[KeyCounts],
) -> Result<Model> {
    super::fit(spec, comparison, table.len() as u64, counts)
}

/// Pass 1: comparison vector counts per blocking key.
pub fn count_patterns(
    spec: &Spec,
    table: &RecordTable,
    blocking: &Blocking,
    comparison: &Comparison,
    tasks: &[Task],
    progress: &Progress,
) -> Result<Vec<KeyCounts>> {
    let n_levels = comparison.n_levels();
    let n_keys = blocking.keys.len();
    let k = comparison.len();
    // Very many pairs: count a deterministic sample of the tasks (by hash), enough for
    // EM on pattern counts; scoring still sees every pair.
    let raw_total: u64 = blocking.keys.iter().map(|k| k.raw_pairs()).sum();
    let keep_one_in = (raw_total / COUNT_SAMPLE_PAIRS).max(1);
    let fresh = || -> Vec<PatternCounts> {
        (0..n_keys)
            .map(|_| PatternCounts::new(n_levels.clone()))
            .collect()
    };
    let parts: Vec<Result<Vec<PatternCounts>>> = crate::util::chunks(tasks)
        .into_par_iter()
        .map(|chunk| {
            let mut counts = fresh();
            let mut scratch = comparison.scratch();
            for task in chunk {
                progress.inc(1);
                if keep_one_in > 1 && task_hash(task) % keep_one_in != 0 {
                    continue;
                }
                let c = &mut counts[task.key];
                let mut err = Ok(());
                blocking.for_each_pair(task, |a, b| {
                    let g = comparison.gamma(table, a, b, &mut scratch);
                    if let Err(e) = c.add(&g[..k], 1) {
                        err = Err(e);
                    }
                });
                err?;
            }
            Ok(counts)
        })
        .collect();
    let mut total = fresh();
    for part in parts {
        for (t, p) in total.iter_mut().zip(part?) {
            t.merge(p)?;
        }
    }
    Ok(spec
        .blocks
        .iter()
        .zip(total)
        .map(|(b, counts)| KeyCounts {
            name: b.name.clone(),
            excluded: key_excluded(b, comparison),
            counts,
            scale: keep_one_in as f64,
        })
        .collect())
}

/// Per compared attribute, true when blocking key `b` is built from it.
fn key_excluded(b: &crate::block::BlockSpec, comparison: &Comparison) -> Vec<bool> {
    let key_attrs = crate::block::key_attrs(b);
    comparison
        .comparators
        .iter()
        .map(|c| key_attrs.contains(&c.attr))
        .collect()
}

/// About this many pairs are compared for the EM counts; above it, tasks are sampled.
pub const COUNT_SAMPLE_PAIRS: u64 = 4_000_000;

fn task_hash(task: &Task) -> u64 {
    crate::util::mix64((task.key as u64) << 48 ^ (task.block as u64) << 16 ^ task.start as u64)
}

/// What `train` did: the model and the work behind it.
#[derive(Debug, Clone)]
pub struct TrainSummary {
    /// The fitted model.
    pub model: Model,
    /// Per source: rows read, accepted, rejected.
    pub sources: Vec<SourceReport>,
}

/// Fit a model on a prepared run without scoring or writing outputs.
pub fn train(spec: &Spec, prepared: &Prepared, progress: &Progress) -> Result<TrainSummary> {
    let counts = count_patterns(
        spec,
        &prepared.table,
        &prepared.blocking,
        &prepared.comparison,
        &prepared.tasks,
        progress,
    )?;
    let model = fit_counts(spec, &prepared.table, &prepared.comparison, &counts)?;
    Ok(TrainSummary {
        model,
        sources: prepared.reports.clone(),
    })
}

/// Fit the "oracle" model from true labels, for comparison with the unsupervised fit:
/// the same scoring model ([`super::project`]: ordered m and u among the candidate pairs,
/// λ = share of matches among them), with each candidate pair labelled by the truth
/// instead of by the latent classes. Records missing from the truth count as entities
/// of their own.
pub fn train_oracle(
    spec: &Spec,
    prepared: &Prepared,
    truth: &crate::evaluate::Grouping,
) -> Result<TrainSummary> {
    let (table, blocking, comparison, tasks) = (
        &prepared.table,
        &prepared.blocking,
        &prepared.comparison,
        &prepared.tasks,
    );
    let entity = crate::evaluate::entities_from_truth(table, truth);
    let n_levels = comparison.n_levels();
    let k = comparison.len();
    // Per blocking key, pattern counts of true matches [0] and non-matches [1].
    let n_keys = blocking.keys.len();
    let fresh = || -> Vec<[PatternCounts; 2]> {
        (0..n_keys)
            .map(|_| {
                [
                    PatternCounts::new(n_levels.clone()),
                    PatternCounts::new(n_levels.clone()),
                ]
            })
            .collect()
    };
    let parts: Vec<Result<Vec<[PatternCounts; 2]>>> = crate::util::chunks(tasks)
        .into_par_iter()
        .map(|chunk| {
            let mut counts = fresh();
            let mut scratch = comparison.scratch();
            let mut err = Ok(());
            for task in chunk {
                let c = &mut counts[task.key];
                blocking.for_each_pair(task, |a, b| {
                    let class = usize::from(entity[a as usize] != entity[b as usize]);
                    let g = comparison.gamma(table, a, b, &mut scratch);
                    if let Err(e) = c[class].add(&g[..k], 1) {
                        err = Err(e);
                    }
                });
            }
            err.map(|_| counts)
        })
        .collect();
    let mut by_key = fresh();
    for part in parts {
        for (t, [m, o]) in by_key.iter_mut().zip(part?) {
            t[0].merge(m)?;
            t[1].merge(o)?;
        }
    }
    let mut soft = super::SoftCounts::new(&n_levels);
    let mut per_key = Vec::new();
    let key_counts: Vec<KeyCounts> = spec
        .blocks
        .iter()
        .map(|b| KeyCounts {
            name: b.name.clone(),
            excluded: key_excluded(b, comparison),
            counts: PatternCounts::new(n_levels.clone()),
            scale: 1.0,
        })
        .collect();
    for ([matches, others], key) in by_key.iter().zip(&key_counts) {
        let mut own = super::SoftCounts::new(&n_levels);
        for (label, counts) in [(1.0, matches), (0.0, others)] {
            for (codes, n) in counts.iter() {
                soft.add(&super::masked(&codes, &key.excluded), n as f64, label);
                own.add(&codes, n as f64, label);
            }
        }
        per_key.push(own);
    }
    if soft.pairs <= 0.0 {
        return Err(Error::Usage(
            "the blocking keys produced no candidate pairs, so there is nothing to fit".into(),
        ));
    }
    let (lambda, m, u) = super::project(&soft);
    let keys = super::key_models(&key_counts, &per_key, lambda, &m, &u);
    let attribute = super::attr_models(spec, comparison, &m, &u);
    let warnings = super::level_warnings(&attribute);
    let fitted = Model {
        format: "samekey-model".into(),
        version: super::MODEL_VERSION,
        spec_fingerprint: spec.model_fingerprint(),
        spec_layout: spec.model_layout(),
        lambda: lambda.clamp(1e-9, 1.0 - 1e-9),
        records: table.len() as u64,
        candidate_pairs: soft.pairs.round() as u64,
        expected_matches: soft.matches,
        attribute,
        keys,
        fit: super::FitReport {
            method: "true labels".into(),
            identifying: Vec::new(),
            classes: Vec::new(),
            choices: Vec::new(),
            iterations: 0,
            loglik_trace: Vec::new(),
        },
        warnings,
    };
    Ok(TrainSummary {
        model: fitted,
        sources: prepared.reports.clone(),
    })
}
