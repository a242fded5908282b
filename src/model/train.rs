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
use crate::error::Result;
use crate::prepare::Prepared;
use crate::record::RecordTable;
use crate::sources::SourceReport;
use crate::spec::Spec;
use crate::util::Progress;

/// The fit without labels from the comparison vector counts of pass 1: u from random
/// record pairs, then [`super::fit`].
pub fn fit_counts(
    spec: &Spec,
    table: &RecordTable,
    comparison: &Comparison,
    counts: &[KeyCounts],
) -> Result<Model> {
    let (u, u_pairs) = super::estimate_u(
        table,
        comparison,
        spec.model.u_sample_pairs,
        spec.model.seed,
    );
    super::fit(spec, comparison, table.len() as u64, counts, u, u_pairs)
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
    type Pair = (Vec<PatternCounts>, Vec<PatternCounts>);
    let fresh = || -> Pair {
        (
            (0..n_keys)
                .map(|_| PatternCounts::new(n_levels.clone()))
                .collect(),
            (0..n_keys)
                .map(|_| PatternCounts::new(n_levels.clone()))
                .collect(),
        )
    };
    let parts: Vec<Result<Pair>> = crate::util::chunks(tasks)
        .into_par_iter()
        .map(|chunk| {
            let (mut new_counts, mut all_counts) = fresh();
            let mut scratch = comparison.scratch();
            for task in chunk {
                progress.inc(1);
                if keep_one_in > 1 && task_hash(task) % keep_one_in != 0 {
                    continue;
                }
                let (cn, ca) = (&mut new_counts[task.key], &mut all_counts[task.key]);
                let mut err = Ok(());
                blocking.for_each_pair_all(task, |a, b, new| {
                    let g = comparison.gamma(table, a, b, &mut scratch);
                    let r =
                        ca.add(&g[..k], 1)
                            .and_then(|_| if new { cn.add(&g[..k], 1) } else { Ok(()) });
                    if let Err(e) = r {
                        err = Err(e);
                    }
                });
                err?;
            }
            Ok((new_counts, all_counts))
        })
        .collect();
    let (mut total_new, mut total_all) = fresh();
    for part in parts {
        let (n, a) = part?;
        for (t, p) in total_new.iter_mut().zip(n) {
            t.merge(p)?;
        }
        for (t, p) in total_all.iter_mut().zip(a) {
            t.merge(p)?;
        }
    }
    Ok(spec
        .blocks
        .iter()
        .zip(total_new.into_iter().zip(total_all))
        .map(|(b, (counts, all_counts))| {
            let key_attrs = crate::block::key_attrs(b);
            KeyCounts {
                name: b.name.clone(),
                excluded: comparison
                    .comparators
                    .iter()
                    .map(|c| key_attrs.contains(&c.attr))
                    .collect(),
                counts,
                all_counts,
                scale: keep_one_in as f64,
            }
        })
        .collect())
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
/// m from the level frequencies among the candidate pairs that are true matches
/// (smoothed like EM's m), u from the same random pairs as the unsupervised fit, and λ
/// from the true matches among the candidates. `entity` gives each record's entity, in
/// table order; see [`crate::evaluate::entities_from_truth`].
pub fn train_oracle(
    spec: &Spec,
    prepared: &Prepared,
    truth: &crate::evaluate::Grouping,
) -> Result<TrainSummary> {
    use std::sync::atomic::{AtomicU64, Ordering};
    let (table, blocking, comparison, tasks) = (
        &prepared.table,
        &prepared.blocking,
        &prepared.comparison,
        &prepared.tasks,
    );
    let entity = crate::evaluate::entities_from_truth(table, truth);
    let n_levels = comparison.n_levels();
    let n_keys = blocking.keys.len();
    // Level counts per key, per class (0 = true match, 1 = non-match), per attribute.
    type Counts = Vec<[Vec<Vec<u64>>; 2]>;
    let empty = || -> Counts {
        (0..n_keys)
            .map(|_| {
                let rows = || n_levels.iter().map(|&l| vec![0u64; l]).collect::<Vec<_>>();
                [rows(), rows()]
            })
            .collect()
    };
    let pair_counts: Vec<AtomicU64> = (0..2 * n_keys).map(|_| AtomicU64::new(0)).collect();
    let parts: Vec<Counts> = crate::util::chunks(tasks)
        .into_par_iter()
        .map(|chunk| {
            let mut counts = empty();
            let mut scratch = comparison.scratch();
            for task in chunk {
                let mut seen = [0u64; 2];
                blocking.for_each_pair(task, |a, b| {
                    let class = usize::from(entity[a as usize] != entity[b as usize]);
                    seen[class] += 1;
                    let g = comparison.gamma(table, a, b, &mut scratch);
                    super::count_levels(&mut counts[task.key][class], &g);
                });
                pair_counts[2 * task.key].fetch_add(seen[0], Ordering::Relaxed);
                pair_counts[2 * task.key + 1].fetch_add(seen[1], Ordering::Relaxed);
            }
            counts
        })
        .collect();
    let mut by_key = empty();
    for part in parts {
        for (t, p) in by_key.iter_mut().zip(part) {
            for (tc, pc) in t.iter_mut().zip(&p) {
                super::add_level_counts(tc, pc);
            }
        }
    }
    let smooth = |row: &[u64]| -> Vec<f64> {
        let total: u64 = row.iter().sum();
        let denom = total as f64 + super::M_SMOOTHING * row.len() as f64;
        row.iter()
            .map(|&x| (x as f64 + super::M_SMOOTHING) / denom)
            .collect()
    };
    let (u, u_pairs) = super::estimate_u(
        table,
        comparison,
        spec.model.u_sample_pairs,
        spec.model.seed,
    );
    let mut blocks = Vec::new();
    let mut counts: Vec<Vec<u64>> = n_levels.iter().map(|&l| vec![0; l]).collect();
    let (mut cand, mut matches) = (0u64, 0u64);
    for (b, (kb, spec_b)) in blocking.keys.iter().zip(&spec.blocks).enumerate() {
        let m_pairs = pair_counts[2 * b].load(Ordering::Relaxed);
        let p = m_pairs + pair_counts[2 * b + 1].load(Ordering::Relaxed);
        cand += p;
        matches += m_pairs;
        for (row, krow) in counts.iter_mut().zip(&by_key[b][0]) {
            for (x, y) in row.iter_mut().zip(krow) {
                *x += y;
            }
        }
        let key_attrs = crate::block::key_attrs(spec_b);
        let excluded: Vec<bool> = comparison
            .comparators
            .iter()
            .map(|c| key_attrs.contains(&c.attr))
            .collect();
        let rows = |class: usize| -> Vec<Vec<f64>> {
            by_key[b][class]
                .iter()
                .zip(&excluded)
                .map(|(row, e)| if *e { Vec::new() } else { smooth(row) })
                .collect()
        };
        let lambda = if p == 0 {
            0.0
        } else {
            m_pairs as f64 / p as f64
        };
        blocks.push(super::BlockFit {
            name: kb.name.clone(),
            pairs: p,
            patterns: 0,
            lambda,
            excluded: comparison
                .comparators
                .iter()
                .zip(&excluded)
                .filter(|(_, e)| **e)
                .map(|(c, _)| c.attr.name().to_string())
                .collect(),
            iterations: 0,
            converged: true,
            loglik_trace: Vec::new(),
            local: p >= super::MIN_LOCAL_PAIRS && lambda > 1e-6 && lambda < 1.0 - 1e-6,
            m: rows(0),
            u: rows(1),
        });
    }
    let n = table.len() as u64;
    let all = (n * n.saturating_sub(1) / 2).max(1) as f64;
    let m: Vec<Vec<f64>> = counts
        .iter()
        .map(|row| {
            let total: u64 = row.iter().sum();
            let denom = total as f64 + super::M_SMOOTHING * row.len() as f64;
            row.iter()
                .map(|&x| (x as f64 + super::M_SMOOTHING) / denom)
                .collect()
        })
        .collect();
    let attribute = super::attr_models(spec, comparison, &m, &u);
    let warnings = super::level_warnings(&attribute);
    let fitted = Model {
        format: "samekey-model".into(),
        version: super::MODEL_VERSION,
        spec_fingerprint: spec.model_fingerprint(),
        spec_layout: spec.model_layout(),
        lambda: (matches as f64 / all).clamp(1e-12, 0.5),
        records: n,
        candidate_pairs: cand,
        expected_matches: matches as f64,
        u_sample_pairs: u_pairs,
        attribute,
        block: blocks,
        warnings,
    };
    Ok(TrainSummary {
        model: fitted,
        sources: prepared.reports.clone(),
    })
}
