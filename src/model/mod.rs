//! Model: comparison vectors in, Fellegi–Sunter parameters (λ, m, u) and weights out.
//!
//! Fitting, with no labelled data:
//! 1. **u** from random record pairs ([`estimate_u`]): almost all random pairs are
//!    non-matches, so the share of each agreement level among them estimates u.
//!    Laplace smoothing (one pseudo-count per level) keeps unseen levels above zero.
//! 2. **m and λ** by EM ([`em`]) on the counts of distinct comparison vectors, once per
//!    blocking key on the pairs that key produced. An attribute that is part of a key
//!    always agrees on that key's pairs, so it is left out of that key's fit (its m
//!    there would be biased towards 1). Each attribute's m is the average of its
//!    per-key estimates weighted by the expected number of matches of the key
//!    (λ_b × pairs_b); this follows the blocking-bias treatment of docs/methods.md §2.
//!    An attribute used by every key falls back to a fit on all candidate pairs.
//! 3. **λ over all record pairs** = expected matches Σ λ_b pairs_b / (n(n−1)/2), the
//!    prior that goes with u from random pairs.
//!
//! The weight of level `l` of attribute `k` is `log2(m_kl / u_kl)`; a missing value
//! adds 0. The fitted [`Model`] is written as a readable TOML file tied to the spec by a
//! fingerprint of the compared attributes and levels.

use std::path::Path;

use serde::{Deserialize, Serialize};

use crate::compare::{Comparison, Gamma, MISSING_LEVEL};
use crate::error::{Error, Result};
use crate::record::RecordTable;
use crate::spec::Spec;
use crate::util::Rng;

pub mod check;
pub mod em;
pub mod train;

/// Version of the model file format written by this build.
pub const MODEL_VERSION: u32 = 1;

/// Pseudo-count per level for the u estimate from random pairs.
pub const U_PSEUDO_COUNT: f64 = 1.0;

/// Pseudo-count per level for the EM estimates of m (a Dirichlet(1 + s) prior).
pub const M_SMOOTHING: f64 = 0.5;

/// A key's own fit is rejected when the best level of an attribute gets a weight below
/// minus this many bits (agreement counting against a match).
pub const LOCAL_MIN_TOP_WEIGHT: f64 = 1.0;

/// Strength (in pseudo-pairs) of the priors that keep a key's own fit near the combined
/// model (m) and the random pairs (u).
pub const PRIOR_PAIRS: f64 = 200.0;

/// Fewest candidate pairs a blocking key needs for its pairs to be scored with its own
/// fit; keys with fewer pairs use the combined model.
pub const MIN_LOCAL_PAIRS: u64 = 200;

/// Parameters of one compared attribute.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AttrModel {
    /// Attribute name.
    pub attribute: String,
    /// Level names, best first, ending with `disagree`.
    pub levels: Vec<String>,
    /// P(level | match).
    pub m: Vec<f64>,
    /// P(level | non-match).
    pub u: Vec<f64>,
    /// log2(m / u) per level.
    pub weight: Vec<f64>,
    /// Exact agreement is weighted by the frequency of the agreed value.
    #[serde(default)]
    pub frequency: bool,
}

/// What the EM fit on one blocking key's pairs found.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BlockFit {
    /// Blocking key name.
    pub name: String,
    /// Candidate pairs the key produced (after earlier keys).
    pub pairs: u64,
    /// Distinct comparison vectors among them.
    pub patterns: u64,
    /// Share of matches among the key's pairs.
    pub lambda: f64,
    /// Attributes left out of this fit because the key is built from them.
    pub excluded: Vec<String>,
    /// EM iterations.
    pub iterations: usize,
    /// Whether EM met its tolerance.
    pub converged: bool,
    /// Objective after each iteration.
    pub loglik_trace: Vec<f64>,
    /// True when this key's pairs are scored with this key's own fit (`m`, `u`, `lambda`);
    /// false when they use the combined model.
    #[serde(default)]
    pub local: bool,
    /// m per attribute and level on this key's pairs (empty for excluded attributes).
    #[serde(default)]
    pub m: Vec<Vec<f64>>,
    /// u per attribute and level among this key's non-matches (empty for excluded ones).
    #[serde(default)]
    pub u: Vec<Vec<f64>>,
}

/// A fitted model.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Model {
    /// Always `samekey-model`.
    pub format: String,
    /// File format version.
    pub version: u32,
    /// Fingerprint of the spec's compared attributes and levels.
    pub spec_fingerprint: String,
    /// The compared attributes and levels, as text (to name differences).
    pub spec_layout: String,
    /// Match prior over all record pairs.
    pub lambda: f64,
    /// Records the model was fitted on.
    pub records: u64,
    /// Candidate pairs the model was fitted on.
    pub candidate_pairs: u64,
    /// Expected true matches among the candidate pairs.
    pub expected_matches: f64,
    /// Random record pairs used for u.
    pub u_sample_pairs: u64,
    /// Per attribute parameters, in spec order.
    pub attribute: Vec<AttrModel>,
    /// Per blocking key fits.
    pub block: Vec<BlockFit>,
    /// Things a person should look at (e.g. an agreement level that counts against a match).
    #[serde(default)]
    pub warnings: Vec<String>,
}

impl Model {
    /// Weight tables indexed `[attribute][level]`.
    pub fn weights(&self) -> Vec<Vec<f64>> {
        self.attribute.iter().map(|a| a.weight.clone()).collect()
    }

    /// Total EM iterations over all keys.
    pub fn iterations(&self) -> usize {
        self.block.iter().map(|b| b.iterations).sum()
    }

    /// Write the model as TOML to `path` (atomically: temp file, then rename).
    pub fn save(&self, path: &Path) -> Result<()> {
        let text = toml::to_string_pretty(self)
            .map_err(|e| Error::Internal(format!("cannot serialize the model: {e}")))?;
        let header =
            "# samekey fitted model: Fellegi–Sunter m/u per attribute level and the match\n\
                      # prior. Weights are log2(m/u); a missing value adds 0.\n";
        crate::output::write_atomic(path, format!("{header}{text}").as_bytes())
    }

    /// Read a model file and check it fits `spec`.
    pub fn load(path: &Path, spec: &Spec) -> Result<Model> {
        let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
        let model: Model = toml::from_str(&text).map_err(|e| Error::Model {
            file: path.to_path_buf(),
            message: format!("not a readable model file: {}", e.message()),
        })?;
        let bad = |message: String| Error::Model {
            file: path.to_path_buf(),
            message,
        };
        if model.format != "samekey-model" {
            return Err(bad(format!(
                "`format = {:?}`: expected \"samekey-model\"",
                model.format
            )));
        }
        if model.version != MODEL_VERSION {
            return Err(bad(format!(
                "version {} is not supported; this build reads version {MODEL_VERSION}",
                model.version
            )));
        }
        if model.spec_fingerprint != spec.model_fingerprint() {
            let theirs: Vec<&str> = model.spec_layout.lines().collect();
            let ours = spec.model_layout();
            let ours: Vec<&str> = ours.lines().collect();
            let mut diffs: Vec<String> = Vec::new();
            for l in &ours {
                if !theirs.contains(l) {
                    diffs.push(format!("the spec has `{l}`"));
                }
            }
            for l in &theirs {
                if !ours.contains(l) {
                    diffs.push(format!("the model has `{l}`"));
                }
            }
            if diffs.is_empty() {
                diffs.push("the compared attributes are in a different order".into());
            }
            return Err(bad(format!(
                "fitted on a different spec: {}; fit a new model with `samekey train`",
                diffs.join("; ")
            )));
        }
        check::validate(&model, &spec.model_layout()).map_err(bad)?;
        Ok(model)
    }
}

/// How far a stored weight may be from log2(m/u) (the file keeps 17 significant digits).
pub const MAX_WEIGHT_DIFF: f64 = 1e-6;
/// How far a stored set of m (or u) values may sum from 1.
pub const SUM_TOLERANCE: f64 = 1e-4;

/// Per attribute parameters and weights from m and u tables.
pub fn attr_models(
    spec: &Spec,
    comparison: &Comparison,
    m: &[Vec<f64>],
    u: &[Vec<f64>],
) -> Vec<AttrModel> {
    comparison
        .comparators
        .iter()
        .enumerate()
        .map(|(k, c)| AttrModel {
            attribute: c.attr.name().to_string(),
            levels: c.names.clone(),
            m: m[k].clone(),
            u: u[k].clone(),
            weight: m[k]
                .iter()
                .zip(&u[k])
                .map(|(m, u)| (m.max(1e-12) / u).log2())
                .collect(),
            frequency: spec.compares[k].frequency,
        })
        .collect()
}

/// Warnings for agreement levels that do not do their job, which usually means a level
/// that is too loose, or too little data:
/// - the first (strictest) level with m below u: full agreement would count as evidence
///   against a match;
/// - any agreement level whose weight log2(m/u) is not above the weight of `disagree`:
///   agreeing at it would count no more for a match than disagreeing.
///
/// A looser level with m below u but above `disagree` is normal (agreeing on the birth
/// year alone is rarer among matches than among random pairs, yet it is still better
/// than disagreeing) and is not reported.
pub fn level_warnings(attrs: &[AttrModel]) -> Vec<String> {
    let mut out = Vec::new();
    for a in attrs {
        let Some(last) = a.levels.len().checked_sub(1) else {
            continue;
        };
        let weight = |l: usize| (a.m[l] / a.u[l]).log2();
        let disagree = weight(last);
        for (l, name) in a.levels.iter().enumerate().take(last) {
            if l == 0 && a.m[l] < a.u[l] {
                out.push(format!(
                    "`{}` level `{name}`: m = {:.4} is below u = {:.4}, so agreeing at this level \
                     counts against a match; consider a stricter level or more data",
                    a.attribute, a.m[l], a.u[l]
                ));
            } else if weight(l) <= disagree {
                out.push(format!(
                    "`{}` level `{name}`: its weight {:.2} bits is not above the weight of \
                     `disagree` ({disagree:.2} bits), so agreeing at this level counts no more \
                     for a match than disagreeing; consider removing the level, a stricter one \
                     or more data",
                    a.attribute,
                    weight(l)
                ));
            }
        }
    }
    out
}

/// Largest change (in bits, either way) a value's frequency makes to the exact weight.
pub const FREQ_MAX_ADJUST: f64 = 6.0;

/// Value-frequency adjustment of one attribute's exact level.
#[derive(Debug, Clone)]
struct FreqAdjust<'a> {
    exact: u8,
    ids: &'a [u32],
    adjust: Vec<f64>,
}

/// One blocking key's own model: weights (rows of excluded attributes are zero) and prior.
#[derive(Debug, Clone)]
struct KeyModel {
    weights: Vec<Vec<f64>>,
    prior: f64,
}

/// Computes match weights and priors for scoring pairs.
///
/// **Which model scores a pair.** Pairs produced by blocking key `b` agree on `b`'s
/// attributes and disagree on every earlier key, and among them non-matches are not like
/// random pairs: two records sharing a family name and a postcode are often members of
/// one household, who also share the street, the city and sometimes the phone. Weights
/// with u from random pairs count such agreements as strong, independent evidence and
/// merge households. So when key `b`'s own EM fit is usable ([`BlockFit::local`]) its
/// pairs are scored with that fit — m, u and λ estimated on exactly the pairs it scores,
/// leaving out the key's own attributes — which is the Fellegi–Sunter posterior
/// conditional on how the pair was found. Other pairs use the combined model (m combined
/// over keys, u from random pairs, λ over all pairs).
///
/// **Value frequencies.** Agreement on value `v` is `m_exact · p_v` likely among matches
/// and `p_v²` among non-matches (`p_v` = share of records with `v`), so its weight is
/// `log2(m_exact / p_v)` instead of the average `log2(m_exact / u_exact)`: the adjustment
/// is `log2(u_exact / p_v)` (u from random pairs), clamped to ±[`FREQ_MAX_ADJUST`] bits so
/// that a value seen once or a dominant value cannot decide a pair alone (Winkler 1989;
/// docs/methods.md §3).
#[derive(Debug, Clone)]
pub struct Scorer<'a> {
    weights: Vec<Vec<f64>>,
    prior: f64,
    keys: Vec<Option<KeyModel>>,
    freq: Vec<Option<FreqAdjust<'a>>>,
}

impl<'a> Scorer<'a> {
    /// Prepare scoring of `table`'s pairs; `keys` are the spec's blocking keys, matched to
    /// the model's per-key fits by name.
    pub fn new(
        model: &Model,
        comparison: &Comparison,
        table: &'a RecordTable,
        keys: &[crate::block::BlockSpec],
    ) -> Scorer<'a> {
        let freq = model
            .attribute
            .iter()
            .zip(&comparison.comparators)
            .map(|(a, c)| {
                if !a.frequency {
                    return None;
                }
                let exact = c
                    .levels
                    .iter()
                    .position(|l| *l == crate::compare::Level::Exact)?
                    as u8;
                let col = table.column(c.attr);
                let present = col.present().max(1) as f64;
                let u_exact = a.u[exact as usize];
                let adjust = col
                    .counts
                    .iter()
                    .map(|&n| {
                        let p = (n.max(1) as f64) / present;
                        (u_exact / p)
                            .log2()
                            .clamp(-FREQ_MAX_ADJUST, FREQ_MAX_ADJUST)
                    })
                    .collect();
                Some(FreqAdjust {
                    exact,
                    ids: &col.ids,
                    adjust,
                })
            })
            .collect();
        let n_levels: Vec<usize> = model.attribute.iter().map(|a| a.levels.len()).collect();
        let key_models = keys
            .iter()
            .map(|spec| {
                let fit = model
                    .block
                    .iter()
                    .find(|b| b.name == spec.name && b.local)?;
                if fit.m.len() != n_levels.len() || fit.u.len() != n_levels.len() {
                    return None;
                }
                let weights = (0..n_levels.len())
                    .map(|k| {
                        let (m, u) = (&fit.m[k], &fit.u[k]);
                        if m.len() == n_levels[k] && u.len() == n_levels[k] {
                            m.iter()
                                .zip(u)
                                .map(|(m, u)| (m.max(1e-12) / u.max(1e-12)).log2())
                                .collect()
                        } else {
                            vec![0.0; n_levels[k]]
                        }
                    })
                    .collect();
                Some(KeyModel {
                    weights,
                    prior: crate::decide::prior_log2_odds(fit.lambda),
                })
            })
            .collect();
        Scorer {
            weights: model.weights(),
            prior: crate::decide::prior_log2_odds(model.lambda),
            keys: key_models,
            freq,
        }
    }

    fn table(&self, key: Option<usize>) -> (&[Vec<f64>], f64) {
        match key.and_then(|k| self.keys.get(k)).and_then(|m| m.as_ref()) {
            Some(m) => (&m.weights, m.prior),
            None => (&self.weights, self.prior),
        }
    }

    /// log2 prior odds of a match for pairs of blocking key `key` (`None`: any pair).
    #[inline]
    pub fn prior(&self, key: Option<usize>) -> f64 {
        self.table(key).1
    }

    /// Weight added by attribute `k` at level `code` for a pair of blocking key `key`
    /// whose first record is `a`.
    #[inline]
    pub fn contribution(&self, key: Option<usize>, k: usize, code: u8, a: u32) -> f64 {
        if code == MISSING_LEVEL {
            return 0.0;
        }
        let row = &self.table(key).0[k];
        let mut w = row[code as usize];
        if let Some(f) = &self.freq[k] {
            if code == f.exact && w != 0.0 {
                w += f.adjust[f.ids[a as usize] as usize];
            }
        }
        w
    }

    /// Weight of attribute `k` at level `code` without value-frequency adjustment.
    #[inline]
    pub fn contribution_plain(&self, key: Option<usize>, k: usize, code: u8) -> f64 {
        if code == MISSING_LEVEL {
            0.0
        } else {
            self.table(key).0[k][code as usize]
        }
    }

    /// Match weight of a pair of blocking key `key` with comparison vector `gamma` and
    /// first record `a`.
    #[inline]
    pub fn weight(&self, key: Option<usize>, gamma: &Gamma, a: u32) -> f64 {
        (0..self.weights.len())
            .map(|k| self.contribution(key, k, gamma[k], a))
            .sum()
    }
}

/// Count one comparison vector into per-attribute level rows (missing levels are not
/// counted).
pub fn count_levels(rows: &mut [Vec<u64>], g: &Gamma) {
    for (k, row) in rows.iter_mut().enumerate() {
        if g[k] != MISSING_LEVEL {
            row[g[k] as usize] += 1;
        }
    }
}

/// Add the level counts `from` into `into` (same shape).
pub fn add_level_counts(into: &mut [Vec<u64>], from: &[Vec<u64>]) {
    for (row, other) in into.iter_mut().zip(from) {
        for (x, y) in row.iter_mut().zip(other) {
            *x += y;
        }
    }
}

/// Level counts among random record pairs: `[attribute][level]`, and pairs drawn.
pub fn estimate_u(
    table: &RecordTable,
    comparison: &Comparison,
    sample: usize,
    seed: u64,
) -> (Vec<Vec<f64>>, u64) {
    use rayon::prelude::*;
    let n = table.len() as u64;
    let all = n * n.saturating_sub(1) / 2;
    let n_levels = comparison.n_levels();
    let empty = || n_levels.iter().map(|&l| vec![0u64; l]).collect::<Vec<_>>();
    let (counts, drawn) = if all <= sample as u64 {
        // Small data: every pair.
        let mut counts = empty();
        let mut scratch = comparison.scratch();
        for a in 0..n as u32 {
            for b in a + 1..n as u32 {
                count_levels(&mut counts, &comparison.gamma(table, a, b, &mut scratch));
            }
        }
        (counts, all)
    } else {
        const CHUNK: usize = 8192;
        let chunks = sample.div_ceil(CHUNK);
        let parts: Vec<Vec<Vec<u64>>> = (0..chunks)
            .into_par_iter()
            .map(|c| {
                let mut rng = Rng::new(seed ^ (c as u64).wrapping_mul(0x9E37_79B9_7F4A_7C15));
                let mut counts = empty();
                let mut scratch = comparison.scratch();
                let todo = CHUNK.min(sample - c * CHUNK);
                for _ in 0..todo {
                    let a = rng.below(n) as u32;
                    let mut b = rng.below(n - 1) as u32;
                    if b >= a {
                        b += 1;
                    }
                    count_levels(&mut counts, &comparison.gamma(table, a, b, &mut scratch));
                }
                counts
            })
            .collect();
        let mut counts = empty();
        for p in parts {
            add_level_counts(&mut counts, &p);
        }
        (counts, sample as u64)
    };
    let u = counts
        .iter()
        .map(|row| {
            let total: u64 = row.iter().sum();
            let denom = total as f64 + U_PSEUDO_COUNT * row.len() as f64;
            row.iter()
                .map(|&c| (c as f64 + U_PSEUDO_COUNT) / denom)
                .collect()
        })
        .collect();
    (u, drawn)
}

/// EM for λ, u and some of m on the pairs a key scores, started at the combined model
/// and regularized towards it (Dirichlet priors centred on the combined m and on the
/// random-pair u, each worth [`PRIOR_PAIRS`] pseudo-pairs). u is free: the key learns
/// what its non-matches share (households share an address and often a phone). m is
/// held at the combined estimate except for the attributes of earlier keys (`free_m`):
/// the key's matches were selected by failing those keys, so there they differ from
/// matches in general. Holding the rest of m keeps the match class on identity. `None`
/// when there is nothing to fit.
fn conditional_fit(
    counts: &em::PatternCounts,
    m: &[Vec<f64>],
    u_random: &[Vec<f64>],
    lambda0: f64,
    free_m: &[bool],
    opts: &em::EmOptions,
) -> Option<ConditionalFit> {
    let patterns: Vec<(Vec<u8>, f64)> = counts.iter().map(|(c, n)| (c, n as f64)).collect();
    let total: f64 = patterns.iter().map(|p| p.1).sum();
    if total <= 0.0 {
        return None;
    }
    let active = opts.active.clone().unwrap_or_else(|| vec![true; m.len()]);
    let m_prior = m;
    let mut m = m.to_vec();
    let mut lambda = lambda0.clamp(0.05, 0.95);
    let mut u = u_random.to_vec();
    let mut trace = Vec::new();
    let mut iterations = 0;
    for _ in 0..opts.max_iterations.max(1) {
        iterations += 1;
        let ln = |t: &[Vec<f64>]| -> Vec<Vec<f64>> {
            t.iter()
                .map(|r| r.iter().map(|x| x.max(1e-12).ln()).collect())
                .collect()
        };
        let (ln_m, ln_u) = (ln(&m), ln(&u));
        let mut su: Vec<Vec<f64>> = u.iter().map(|r| vec![0.0; r.len()]).collect();
        let mut sm_levels: Vec<Vec<f64>> = m.iter().map(|r| vec![0.0; r.len()]).collect();
        let (mut sm, mut ll) = (0.0, 0.0);
        for (codes, n) in &patterns {
            let (mut lm, mut lu) = (lambda.ln(), (1.0 - lambda).ln());
            for (k, &c) in codes.iter().enumerate() {
                if active[k] && c != MISSING_LEVEL {
                    lm += ln_m[k][c as usize];
                    lu += ln_u[k][c as usize];
                }
            }
            let hi = lm.max(lu);
            let norm = hi + ((lm - hi).exp() + (lu - hi).exp()).ln();
            ll += n * norm;
            let p = (lm - norm).exp();
            sm += n * p;
            for (k, &c) in codes.iter().enumerate() {
                if active[k] && c != MISSING_LEVEL {
                    su[k][c as usize] += n * (1.0 - p);
                    sm_levels[k][c as usize] += n * p;
                }
            }
        }
        trace.push(ll);
        let new_lambda = (sm / total).clamp(1e-9, 1.0 - 1e-9);
        let mut change = (new_lambda - lambda).abs();
        for k in (0..su.len()).filter(|&k| active[k]) {
            let (seen_u, seen_m): (f64, f64) = (su[k].iter().sum(), sm_levels[k].iter().sum());
            for l in 0..su[k].len() {
                let v = (su[k][l] + PRIOR_PAIRS * u_random[k][l]) / (seen_u + PRIOR_PAIRS);
                let w = (sm_levels[k][l] + PRIOR_PAIRS * m_prior[k][l]) / (seen_m + PRIOR_PAIRS);
                change = change.max((v - u[k][l]).abs());
                u[k][l] = v;
                if free_m[k] {
                    change = change.max((w - m[k][l]).abs());
                    m[k][l] = w;
                }
            }
        }
        lambda = new_lambda;
        if change < 1e-7 {
            break;
        }
    }
    Some(ConditionalFit {
        lambda,
        m,
        u,
        iterations,
        trace,
    })
}

/// Result of [`conditional_fit`].
struct ConditionalFit {
    lambda: f64,
    m: Vec<Vec<f64>>,
    u: Vec<Vec<f64>>,
    iterations: usize,
    trace: Vec<f64>,
}

/// Inputs of [`fit`] for one blocking key.
#[derive(Debug)]
pub struct KeyCounts {
    /// Blocking key name.
    pub name: String,
    /// Per compared attribute, true when the key is built from it.
    pub excluded: Vec<bool>,
    /// Comparison vector counts of the pairs this key produces first (the pairs it
    /// scores).
    pub counts: em::PatternCounts,
    /// Comparison vector counts of all pairs inside this key's blocks, including pairs
    /// an earlier key produced: the population for estimating m without selection by
    /// the earlier keys.
    pub all_counts: em::PatternCounts,
    /// Pairs each counted pair stands for (1 unless the counts are a sample of tasks).
    pub scale: f64,
}

/// Fit the model from per-key comparison vector counts and random-pair u.
///
/// Stage 1 estimates m per key on all pairs inside the key's blocks, leaving out the
/// key's own attributes (which always agree there), and combines the estimates weighted
/// by each key's expected matches. Stage 2 holds m at the combined estimate and fits λ
/// and u on the pairs each key produces first (the pairs it scores): that gives the
/// expected matches (hence λ over all pairs) and the per-key scoring fits.
pub fn fit(
    spec: &Spec,
    comparison: &Comparison,
    records: u64,
    keys: &[KeyCounts],
    u: Vec<Vec<f64>>,
    u_pairs: u64,
) -> Result<Model> {
    let n_levels = comparison.n_levels();
    let k_attrs = n_levels.len();
    let opts = |active: Vec<bool>| em::EmOptions {
        max_iterations: spec.model.max_iterations,
        active: Some(active),
        smoothing: M_SMOOTHING,
        ..em::EmOptions::default()
    };
    let mut blocks = Vec::new();
    let mut warnings = Vec::new();
    let mut m_sum: Vec<Vec<f64>> = n_levels.iter().map(|&l| vec![0.0; l]).collect();
    let mut m_weight = vec![0.0f64; k_attrs];
    let mut candidate_pairs = 0.0;
    let mut stage1_lambda = Vec::new();
    for key in keys {
        let pairs = key.counts.total() as f64 * key.scale;
        candidate_pairs += pairs;
        let active: Vec<bool> = key.excluded.iter().map(|e| !e).collect();
        let mut fit_info = BlockFit {
            name: key.name.clone(),
            pairs: pairs.round() as u64,
            patterns: key.all_counts.len() as u64,
            lambda: 0.0,
            excluded: comparison
                .comparators
                .iter()
                .zip(&key.excluded)
                .filter(|(_, e)| **e)
                .map(|(c, _)| c.attr.name().to_string())
                .collect(),
            iterations: 0,
            converged: true,
            loglik_trace: Vec::new(),
            local: false,
            m: Vec::new(),
            u: Vec::new(),
        };
        stage1_lambda.push(None);
        if key.all_counts.total() == 0 || !active.iter().any(|a| *a) {
            blocks.push(fit_info);
            continue;
        }
        let mut init = em::default_init(&n_levels, 0.1);
        init.u = u.clone();
        let f = em::fit(&key.all_counts, &init, &opts(active.clone()))?;
        // A latent class fit can split a key's pairs on something other than identity
        // (e.g. moved vs not moved). Then agreeing on a name would count against a match;
        // such a fit is not used for the combined m.
        let wrong: Vec<String> = (0..k_attrs)
            .filter(|&k| active[k])
            .filter(|&k| (f.params.m[k][0] / f.params.u[k][0]).log2() < -LOCAL_MIN_TOP_WEIGHT)
            .map(|k| comparison.comparators[k].attr.name().to_string())
            .collect();
        if wrong.is_empty() {
            let matches = f.params.lambda * key.all_counts.total() as f64 * key.scale;
            for k in (0..k_attrs).filter(|&k| active[k]) {
                for (s, m) in m_sum[k].iter_mut().zip(&f.params.m[k]) {
                    *s += matches * m;
                }
                m_weight[k] += matches;
            }
        } else {
            warnings.push(format!(
                "blocking key `{}`: its EM fit makes the best level of {} count against a \
                 match, so it separates the pairs on something other than identity; it is \
                 left out of the combined m",
                key.name,
                wrong
                    .iter()
                    .map(|w| format!("`{w}`"))
                    .collect::<Vec<_>>()
                    .join(", ")
            ));
        }
        if let Some(last) = stage1_lambda.last_mut() {
            *last = Some(f.params.lambda);
        }
        fit_info.iterations = f.iterations;
        fit_info.converged = f.converged;
        fit_info.loglik_trace = f.loglik_trace;
        blocks.push(fit_info);
    }
    if candidate_pairs <= 0.0 {
        return Err(Error::Usage(
            "the blocking keys produced no candidate pairs, so there is nothing to fit; check \
             that the key attributes are mapped and filled"
                .into(),
        ));
    }
    // Attributes left out of every usable fit: fit them on all candidate pairs.
    let missing: Vec<usize> = (0..k_attrs).filter(|&k| m_weight[k] <= 0.0).collect();
    if !missing.is_empty() {
        let mut all = em::PatternCounts::new(n_levels.clone());
        for key in keys {
            all.merge(key.counts.clone())?;
        }
        let mut init = em::default_init(&n_levels, 0.1);
        init.u = u.clone();
        let f = em::fit(&all, &init, &opts(vec![true; k_attrs]))?;
        for &k in &missing {
            m_sum[k] = f.params.m[k].clone();
            m_weight[k] = 1.0;
        }
    }
    let m_final: Vec<Vec<f64>> = (0..k_attrs)
        .map(|k| m_sum[k].iter().map(|s| s / m_weight[k]).collect())
        .collect();

    // Stage 2: hold m, fit λ and u on the pairs each key scores.
    let mut expected = 0.0;
    for (b, key) in keys.iter().enumerate() {
        let fit_info = &mut blocks[b];
        let new_pairs = key.counts.total() as f64 * key.scale;
        if key.counts.total() == 0 {
            continue;
        }
        let active: Vec<bool> = key.excluded.iter().map(|e| !e).collect();
        let lambda0 = stage1_lambda[b].unwrap_or(0.1);
        let earlier: Vec<crate::record::Attr> = spec.blocks[..b]
            .iter()
            .flat_map(|bs| bs.keys.iter().map(|p| p.attr))
            .collect();
        let free_m: Vec<bool> = comparison
            .comparators
            .iter()
            .map(|c| earlier.contains(&c.attr))
            .collect();
        let Some(cf) = conditional_fit(
            &key.counts,
            &m_final,
            &u,
            lambda0,
            &free_m,
            &opts(active.clone()),
        ) else {
            expected += lambda0 * new_pairs;
            fit_info.lambda = lambda0;
            continue;
        };
        expected += cf.lambda * new_pairs;
        let wrong = (0..k_attrs)
            .any(|k| active[k] && (cf.m[k][0] / cf.u[k][0]).log2() < -LOCAL_MIN_TOP_WEIGHT);
        let keep = |rows: &[Vec<f64>]| -> Vec<Vec<f64>> {
            rows.iter()
                .zip(&active)
                .map(|(r, a)| if *a { r.clone() } else { Vec::new() })
                .collect()
        };
        fit_info.m = keep(&cf.m);
        fit_info.u = keep(&cf.u);
        fit_info.lambda = cf.lambda;
        fit_info.iterations += cf.iterations;
        fit_info.loglik_trace.extend(cf.trace);
        fit_info.local = !wrong
            && key.counts.total() >= MIN_LOCAL_PAIRS
            && cf.lambda > 1e-6
            && cf.lambda < 1.0 - 1e-6;
    }
    let all_pairs = (records * records.saturating_sub(1) / 2).max(1) as f64;
    let lambda = (expected / all_pairs).clamp(1e-12, 0.5);
    let attribute = attr_models(spec, comparison, &m_final, &u);
    warnings.extend(level_warnings(&attribute));
    Ok(Model {
        warnings,
        format: "samekey-model".into(),
        version: MODEL_VERSION,
        spec_fingerprint: spec.model_fingerprint(),
        spec_layout: spec.model_layout(),
        lambda,
        records,
        candidate_pairs: candidate_pairs.round() as u64,
        expected_matches: expected,
        u_sample_pairs: u_pairs,
        attribute,
        block: blocks,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::compare::{CompareSpec, Level};
    use crate::record::{Attr, RecordTableBuilder, StdRecord};

    fn model_with(frequency: bool) -> Model {
        Model {
            format: "samekey-model".into(),
            version: MODEL_VERSION,
            spec_fingerprint: String::new(),
            spec_layout: String::new(),
            lambda: 1e-4,
            records: 0,
            candidate_pairs: 0,
            expected_matches: 0.0,
            u_sample_pairs: 0,
            attribute: vec![AttrModel {
                attribute: "family_name".into(),
                levels: vec!["exact".into(), "disagree".into()],
                m: vec![0.9, 0.1],
                u: vec![0.01, 0.99],
                weight: vec![(0.9f64 / 0.01).log2(), (0.1f64 / 0.99).log2()],
                frequency,
            }],
            block: Vec::new(),
            warnings: Vec::new(),
        }
    }

    #[test]
    fn warns_when_agreement_counts_against_a_match() {
        let mut m = model_with(false);
        assert!(level_warnings(&m.attribute).is_empty());
        m.attribute[0].m = vec![0.005, 0.995];
        let w = level_warnings(&m.attribute);
        assert_eq!(w.len(), 1);
        assert!(w[0].contains("`family_name` level `exact`"), "{w:?}");
        // A looser level with m below u that still beats disagreeing: no warning (its
        // weight -1.6 bits is above disagree's -6.6). Values invented for the test.
        let a = &mut m.attribute[0];
        a.levels = vec!["exact".into(), "same_year".into(), "disagree".into()];
        a.m = vec![0.95, 0.04, 0.01];
        a.u = vec![0.01, 0.12, 0.87];
        assert!(level_warnings(&m.attribute).is_empty());
        // The same level below disagree: reported.
        m.attribute[0].m = vec![0.95, 0.001, 0.049];
        let w = level_warnings(&m.attribute);
        assert_eq!(w.len(), 1, "{w:?}");
        assert!(
            w[0].contains("level `same_year`") && w[0].contains("disagree"),
            "{w:?}"
        );
    }

    #[test]
    fn rare_values_weigh_more_than_common_ones() {
        // 60 records "smith", 2 "quillfeather", 38 other distinct names.
        let mut b = RecordTableBuilder::new(vec!["s".into()]);
        let names: Vec<String> = (0..100)
            .map(|i| match i {
                0..60 => "smith".to_string(),
                60..62 => "quillfeather".to_string(),
                _ => format!("name{i}"),
            })
            .collect();
        for (i, n) in names.iter().enumerate() {
            let mut r = StdRecord::default();
            r.set(Attr::FamilyName, Some(n.clone()));
            b.push(0, i.to_string(), r);
        }
        let table = b.finish();
        let spec = CompareSpec {
            attr: Attr::FamilyName,
            levels: vec![Level::Exact],
            frequency: true,
        };
        let comparison = Comparison {
            comparators: vec![crate::compare::Comparator::new(
                &spec,
                table.column(Attr::FamilyName),
            )],
        };
        let exact: Gamma = [0; crate::compare::MAX_ATTRS];
        let plain = Scorer::new(&model_with(false), &comparison, &table, &[]);
        let freq = Scorer::new(&model_with(true), &comparison, &table, &[]);
        let (smith, rare) = (0u32, 60u32);
        assert_eq!(
            plain.weight(None, &exact, smith),
            plain.weight(None, &exact, rare)
        );
        let (ws, wr) = (
            freq.weight(None, &exact, smith),
            freq.weight(None, &exact, rare),
        );
        assert!(wr > ws + 3.0, "rare {wr} vs common {ws}");
        // p(smith) = 0.6: adjustment log2(0.01 / 0.6) = -5.9 bits.
        assert!((ws - plain.weight(None, &exact, smith) - (0.01f64 / 0.6).log2()).abs() < 1e-9);
        // p(quillfeather) = 0.02: log2(0.01 / 0.02) = -1 bit.
        assert!((wr - plain.weight(None, &exact, rare) + 1.0).abs() < 1e-9);
        // Disagreement is not adjusted.
        let mut dis = exact;
        dis[0] = 1;
        assert_eq!(
            freq.weight(None, &dis, rare),
            plain.weight(None, &dis, rare)
        );
    }
}
