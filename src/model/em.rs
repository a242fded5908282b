//! Expectation–maximisation for the Fellegi–Sunter model.
//!
//! **In:** counts of distinct comparison vectors ([`PatternCounts`]), starting
//! parameters ([`Params`]) and options ([`EmOptions`]).
//! **Out:** fitted parameters — the match prevalence λ among candidate pairs and,
//! per attribute, the level probabilities m (given match) and u (given non-match) —
//! plus the log-likelihood trace ([`EmFit`]). [`evidence_bits`] and [`posterior`]
//! score one comparison vector with fitted parameters.
//!
//! The model is the two-class latent class model with conditional independence
//! (Fellegi & Sunter 1969; EM as in Winkler 1988 and Jaro 1989; Dempster, Laird &
//! Rubin 1977). EM runs on the counts of distinct vectors, which is exact and costs
//! one pass over at most Π L_k patterns per iteration.
//!
//! # Level codes
//!
//! Attribute `k` has `n_levels[k]` agreement levels coded `0 .. n_levels[k] - 1`,
//! ordered from the strongest agreement (level 0, e.g. exact) to the weakest (the
//! last level, disagree). [`MISSING_LEVEL`] marks a value missing on either side; a
//! missing attribute is left out of the likelihood (it is neutral, assuming values
//! are missing at random), so it adds 0 to the match weight. [`default_init`] and
//! [`orient`] rely on this order; the EM itself does not.
//!
//! # What the fit does
//!
//! * E-step: `g = λ m(γ) / (λ m(γ) + (1 − λ) u(γ))` per pattern, in log space.
//! * M-step: weighted level frequencies, each attribute over the patterns where it
//!   is observed. Every probability is kept at or above `floor`: the M-step then
//!   maximises over that constrained set (water-filling, see `project_floor`),
//!   so the log-likelihood still never decreases.
//! * Optional prior ([`EmOptions::smoothing`] = s > 0): a symmetric
//!   Dirichlet(1 + s) prior on every estimated m and u row, i.e. s pseudo-counts
//!   per level. The fit then maximises the penalised log-likelihood
//!   `ℓ + s · Σ_k Σ_l (ln m_k(l) + ln u_k(l))` (u terms only when u is estimated),
//!   and the trace holds that objective.
//! * [`EmOptions::fix_u`] keeps u as given (e.g. from random pairs, the stable
//!   choice); [`EmOptions::active`] leaves attributes out of the fit entirely
//!   (neither in the E-step nor updated), which is how the attributes of a blocking
//!   key are excluded on that key's pairs.
//! * Stops when the largest parameter change is below `param_tol` or the relative
//!   change of the objective is below `rel_tol_loglik`, or after `max_iterations`.
//! * [`EmOptions::ordered`] fits under the declared level order: within each
//!   attribute the weight log2(m/u) never increases from a better level to a worse
//!   one. The M-step then pools adjacent levels that violate the order
//!   ([`ordered_rows`]), which maximises the expected complete-data log-likelihood
//!   over the ordered set, so the objective still never decreases (a generalised EM
//!   step, Dempster, Laird & Rubin 1977).
//! * [`fit_classes`] fits a latent class model with more than two classes (for
//!   example same person / same household / unrelated, Winkler 1993) by the same
//!   E- and M-steps over K classes, from several seeded random starts keeping the
//!   best objective; [`ClassFit::bic`] compares fits with different numbers of
//!   classes.
//! * Label switching: EM may return the classes swapped. [`orient`] relabels so
//!   that the match class is the one in which the top agreement level is more
//!   likely; [`fit`] applies it (unless u is fixed) and reports whether it swapped.

use std::collections::HashMap;
use std::hash::BuildHasherDefault;

use crate::{Error, Result};

/// Level code of a missing value: skipped by the likelihood, adds 0 to weights (defined
/// by the comparison stage, which produces it).
pub use crate::compare::MISSING_LEVEL;

/// Largest number of levels an attribute may have (codes 0..=254; 255 is missing).
pub const MAX_LEVELS: usize = MISSING_LEVEL as usize;

// ---------------------------------------------------------------------------
// Pattern counts
// ---------------------------------------------------------------------------

/// Pattern maps: packed keys are well spread by the SplitMix64 finaliser, so patterns
/// differing only in the last attribute still spread over the table.
type PatternMap<K> = HashMap<K, u64, BuildHasherDefault<crate::util::MixHasher>>;

/// Counts of distinct comparison vectors (the sufficient statistic of the model).
///
/// Patterns are packed into a `u64` when all attributes fit in 64 bits (each
/// attribute takes enough bits for its levels plus the missing code), otherwise
/// they are stored as byte vectors. Counting per thread and [`merge`](Self::merge)-ing
/// the results gives the same counts as counting in one place.
#[derive(Debug, Clone)]
pub struct PatternCounts {
    n_levels: Vec<usize>,
    /// Bit widths per attribute when packing is possible.
    bits: Option<Vec<u32>>,
    packed: PatternMap<u64>,
    wide: PatternMap<Box<[u8]>>,
    total: u64,
}

impl PatternCounts {
    /// Empty counts for attributes with the given numbers of levels (each in
    /// `1..=MAX_LEVELS`; level codes are `0..n_levels[k]`, [`MISSING_LEVEL`] aside).
    pub fn new(n_levels: Vec<usize>) -> Self {
        // One extra value per attribute for the missing code.
        let bits: Vec<u32> = n_levels
            .iter()
            .map(|&l| u64::BITS - (l as u64).leading_zeros())
            .collect();
        let packable = bits.iter().map(|&b| b as u64).sum::<u64>() <= 64;
        PatternCounts {
            n_levels,
            bits: packable.then_some(bits),
            packed: PatternMap::default(),
            wide: PatternMap::default(),
            total: 0,
        }
    }

    /// Number of levels per attribute.
    pub fn n_levels(&self) -> &[usize] {
        &self.n_levels
    }

    /// Add `count` pairs with comparison vector `codes`.
    ///
    /// Fails when `codes` has the wrong length or a code is neither a level of its
    /// attribute nor [`MISSING_LEVEL`]; the counts are then unchanged.
    pub fn add(&mut self, codes: &[u8], count: u64) -> Result<()> {
        self.check(codes)?;
        let total = self
            .total
            .checked_add(count)
            .ok_or_else(|| Error::Internal("pattern count overflows 64 bits".into()))?;
        self.total = total;
        match &self.bits {
            Some(bits) => {
                let key = pack(codes, &self.n_levels, bits);
                *self.packed.entry(key).or_insert(0) += count;
            }
            None => {
                if let Some(c) = self.wide.get_mut(codes) {
                    *c += count;
                } else {
                    self.wide.insert(codes.into(), count);
                }
            }
        }
        Ok(())
    }

    fn check(&self, codes: &[u8]) -> Result<()> {
        if codes.len() != self.n_levels.len() {
            return Err(Error::Internal(format!(
                "comparison vector has {} attributes, expected {}",
                codes.len(),
                self.n_levels.len()
            )));
        }
        for (k, (&c, &l)) in codes.iter().zip(&self.n_levels).enumerate() {
            if c != MISSING_LEVEL && c as usize >= l {
                return Err(Error::Internal(format!(
                    "attribute {k}: level {c} is out of range (levels 0..{l}, or missing)"
                )));
            }
        }
        Ok(())
    }

    /// Add all counts of `other` (e.g. counted on another thread).
    ///
    /// Fails when the two were made for different attribute levels.
    pub fn merge(&mut self, other: PatternCounts) -> Result<()> {
        if other.n_levels != self.n_levels {
            return Err(Error::Internal(format!(
                "cannot merge pattern counts for levels {:?} into counts for levels {:?}",
                other.n_levels, self.n_levels
            )));
        }
        self.total = self
            .total
            .checked_add(other.total)
            .ok_or_else(|| Error::Internal("pattern count overflows 64 bits".into()))?;
        // Same levels, so the same storage mode.
        for (k, c) in other.packed {
            *self.packed.entry(k).or_insert(0) += c;
        }
        for (k, c) in other.wide {
            *self.wide.entry(k).or_insert(0) += c;
        }
        Ok(())
    }

    /// Distinct patterns with their counts, sorted by pattern (level codes compared
    /// attribute by attribute), so results do not depend on hashing or threads.
    pub fn iter(&self) -> impl Iterator<Item = (Vec<u8>, u64)> + '_ {
        let mut all: Vec<(Vec<u8>, u64)> = match &self.bits {
            Some(bits) => self
                .packed
                .iter()
                .map(|(&key, &c)| (unpack(key, &self.n_levels, bits), c))
                .collect(),
            None => self.wide.iter().map(|(k, &c)| (k.to_vec(), c)).collect(),
        };
        all.sort_unstable();
        all.into_iter()
    }

    /// Count of one pattern (0 if never added or if `codes` is not a valid vector).
    pub fn get(&self, codes: &[u8]) -> u64 {
        if self.check(codes).is_err() {
            return 0;
        }
        match &self.bits {
            Some(bits) => self
                .packed
                .get(&pack(codes, &self.n_levels, bits))
                .copied()
                .unwrap_or(0),
            None => self.wide.get(codes).copied().unwrap_or(0),
        }
    }

    /// Total number of pairs counted.
    pub fn total(&self) -> u64 {
        self.total
    }

    /// Number of distinct patterns.
    pub fn len(&self) -> usize {
        self.packed.len() + self.wide.len()
    }

    /// True when nothing was counted.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}

fn pack(codes: &[u8], n_levels: &[usize], bits: &[u32]) -> u64 {
    let mut key = 0u64;
    for ((&c, &l), &b) in codes.iter().zip(n_levels).zip(bits) {
        let v = if c == MISSING_LEVEL {
            l as u64
        } else {
            c as u64
        };
        // `b` can be 64 only for a single attribute; `checked_shl` keeps that safe.
        key = key.checked_shl(b).unwrap_or(0) | v;
    }
    key
}

fn unpack(mut key: u64, n_levels: &[usize], bits: &[u32]) -> Vec<u8> {
    let mut codes = vec![0u8; n_levels.len()];
    for k in (0..n_levels.len()).rev() {
        let b = bits[k];
        let mask = if b >= 64 { u64::MAX } else { (1u64 << b) - 1 };
        let v = key & mask;
        key = key.checked_shr(b).unwrap_or(0);
        codes[k] = if v as usize == n_levels[k] {
            MISSING_LEVEL
        } else {
            v as u8
        };
    }
    codes
}

// ---------------------------------------------------------------------------
// Parameters
// ---------------------------------------------------------------------------

/// Fellegi–Sunter parameters.
#[derive(Debug, Clone, PartialEq)]
pub struct Params {
    /// λ = P(match) among the candidate pairs.
    pub lambda: f64,
    /// `m[k][l]` = P(attribute k at level l | match); each row sums to 1.
    pub m: Vec<Vec<f64>>,
    /// `u[k][l]` = P(attribute k at level l | non-match); each row sums to 1.
    pub u: Vec<Vec<f64>>,
}

impl Params {
    /// Number of levels per attribute.
    pub fn n_levels(&self) -> Vec<usize> {
        self.m.iter().map(Vec::len).collect()
    }

    /// Check shapes and values: λ strictly between 0 and 1, m and u with the same
    /// shape, every row non-empty with at most [`MAX_LEVELS`] finite probabilities
    /// in [0, 1] summing to 1 (within 1e-6).
    pub fn validate(&self) -> Result<()> {
        if !(self.lambda > 0.0 && self.lambda < 1.0) {
            return Err(Error::Internal(format!(
                "λ must lie strictly between 0 and 1, got {}",
                self.lambda
            )));
        }
        if self.m.len() != self.u.len() {
            return Err(Error::Internal(format!(
                "m has {} attributes but u has {}",
                self.m.len(),
                self.u.len()
            )));
        }
        for (k, (m, u)) in self.m.iter().zip(&self.u).enumerate() {
            if m.len() != u.len() {
                return Err(Error::Internal(format!(
                    "attribute {k}: m has {} levels but u has {}",
                    m.len(),
                    u.len()
                )));
            }
            if m.is_empty() || m.len() > MAX_LEVELS {
                return Err(Error::Internal(format!(
                    "attribute {k}: {} levels (allowed 1..={MAX_LEVELS})",
                    m.len()
                )));
            }
            for (name, row) in [("m", m), ("u", u)] {
                if let Some(p) = row.iter().find(|p| !(0.0..=1.0).contains(*p)) {
                    return Err(Error::Internal(format!(
                        "attribute {k}: {name} has probability {p} outside [0, 1]"
                    )));
                }
                let s: f64 = row.iter().sum();
                if (s - 1.0).abs() > 1e-6 {
                    return Err(Error::Internal(format!(
                        "attribute {k}: {name} sums to {s}, expected 1"
                    )));
                }
            }
        }
        Ok(())
    }

    /// Partial weights `log2(m_k(l) / u_k(l))` per attribute and level
    /// (±infinity where one side is 0).
    pub fn weights(&self) -> Vec<Vec<f64>> {
        self.m
            .iter()
            .zip(&self.u)
            .map(|(m, u)| m.iter().zip(u).map(|(a, b)| (a / b).log2()).collect())
            .collect()
    }

    /// The same model with the two classes exchanged (λ ↦ 1 − λ, m ↔ u).
    pub fn swapped(&self) -> Params {
        Params {
            lambda: 1.0 - self.lambda,
            m: self.u.clone(),
            u: self.m.clone(),
        }
    }
}

/// Starting values for attributes with `n_levels` levels and prevalence `lambda0`.
///
/// m puts 0.9 on level 0 (the strongest agreement) and shares the rest over the
/// other levels, decreasing with the level; u is the mirror image, favouring the
/// last level (disagree). An attribute with one level gets probability 1.
/// (Winkler-style start: docs/methods.md §2, "m0 ≈ 0.9 on the top level, then decreasing".)
pub fn default_init(n_levels: &[usize], lambda0: f64) -> Params {
    let m: Vec<Vec<f64>> = n_levels
        .iter()
        .map(|&l| match l {
            0 => Vec::new(),
            1 => vec![1.0],
            _ => {
                // Remaining 0.1 shared with weights l-1, l-2, ..., 1 (decreasing).
                let rest: f64 = (1..l).map(|i| (l - i) as f64).sum();
                (0..l)
                    .map(|i| {
                        if i == 0 {
                            0.9
                        } else {
                            0.1 * (l - i) as f64 / rest
                        }
                    })
                    .collect()
            }
        })
        .collect();
    let u = m
        .iter()
        .map(|row| row.iter().rev().copied().collect())
        .collect();
    Params {
        lambda: lambda0,
        m,
        u,
    }
}

/// Observed level frequencies per attribute (missing values left out); uniform for
/// an attribute never observed. Since non-matches dominate candidate pairs, this is
/// a common starting value for u (docs/methods.md §2).
pub fn level_frequencies(data: &PatternCounts) -> Vec<Vec<f64>> {
    let mut freq: Vec<Vec<f64>> = data.n_levels().iter().map(|&l| vec![0.0; l]).collect();
    for (codes, count) in data.iter() {
        for (k, &c) in codes.iter().enumerate() {
            if c != MISSING_LEVEL {
                freq[k][c as usize] += count as f64;
            }
        }
    }
    for row in &mut freq {
        let s: f64 = row.iter().sum();
        let n = row.len() as f64;
        for p in row.iter_mut() {
            *p = if s > 0.0 { *p / s } else { 1.0 / n };
        }
    }
    freq
}

/// Relabel the classes so that the match class is the one in which the strongest
/// agreement level (level 0) is more likely: if Σ_k (m_k(0) − u_k(0)) over the
/// active attributes is negative, swap λ ↦ 1 − λ and m ↔ u. Returns whether it
/// swapped. `active` of the wrong length counts every attribute.
pub fn orient(params: &mut Params, active: Option<&[bool]>) -> bool {
    let score: f64 = params
        .m
        .iter()
        .zip(&params.u)
        .enumerate()
        .filter(|(k, _)| is_active(active, *k))
        .filter_map(|(_, (m, u))| Some(m.first()? - u.first()?))
        .sum();
    if score < 0.0 {
        *params = params.swapped();
        true
    } else {
        false
    }
}

fn is_active(active: Option<&[bool]>, k: usize) -> bool {
    match active {
        Some(a) if k < a.len() => a[k],
        _ => true,
    }
}

// ---------------------------------------------------------------------------
// Scoring
// ---------------------------------------------------------------------------

/// Match weight of one comparison vector: Σ_k log2(m_k(γ_k) / u_k(γ_k)) over the
/// attributes that are not missing. Codes outside an attribute's levels (and
/// attributes beyond the parameters) are treated as missing; to leave an attribute
/// out of the weight, pass [`MISSING_LEVEL`] for it.
pub fn evidence_bits(params: &Params, codes: &[u8]) -> f64 {
    codes
        .iter()
        .zip(params.m.iter().zip(&params.u))
        .filter_map(|(&c, (m, u))| {
            let (m, u) = (m.get(c as usize)?, u.get(c as usize)?);
            (c != MISSING_LEVEL).then(|| (m / u).log2())
        })
        .sum()
}

/// Match probability P(M | γ) = λ m(γ) / (λ m(γ) + (1 − λ) u(γ)), computed from the
/// match weight: log2-odds = W + log2(λ / (1 − λ)) (docs/methods.md §4).
pub fn posterior(params: &Params, codes: &[u8]) -> f64 {
    let log2_odds = evidence_bits(params, codes) + (params.lambda / (1.0 - params.lambda)).log2();
    logistic(log2_odds * std::f64::consts::LN_2)
}

/// 1 / (1 + e^{−x}) without overflow.
fn logistic(x: f64) -> f64 {
    if x >= 0.0 {
        1.0 / (1.0 + (-x).exp())
    } else {
        let e = x.exp();
        e / (1.0 + e)
    }
}

/// ln(e^a + e^b) without overflow.
fn log_add_exp(a: f64, b: f64) -> f64 {
    let hi = a.max(b);
    if hi == f64::NEG_INFINITY {
        return hi;
    }
    hi + ((a - hi).exp() + (b - hi).exp()).ln()
}

/// Log-likelihood Σ_j n_j ln(λ m(γ_j) + (1 − λ) u(γ_j)) (natural log) over the
/// patterns, using only the active attributes (all when `active` is `None`).
/// Returns NaN when the parameters do not fit the data's levels.
pub fn loglik(data: &PatternCounts, params: &Params, active: Option<&[bool]>) -> f64 {
    if params.n_levels() != data.n_levels() || params.u.len() != params.m.len() {
        return f64::NAN;
    }
    let table = Dense::new(data);
    let mask = active_mask(active, table.k);
    let logs = LogParams::new(params, &mask);
    table
        .rows()
        .map(|(codes, n)| {
            let (lm, lu) = logs.class_logs(codes);
            n * log_add_exp(lm, lu)
        })
        .sum()
}

fn active_mask(active: Option<&[bool]>, k: usize) -> Vec<bool> {
    (0..k).map(|i| is_active(active, i)).collect()
}

/// Patterns as a dense, sorted table.
struct Dense {
    k: usize,
    codes: Vec<u8>,
    counts: Vec<f64>,
}

impl Dense {
    fn new(data: &PatternCounts) -> Self {
        let k = data.n_levels().len();
        let mut codes = Vec::with_capacity(data.len() * k);
        let mut counts = Vec::with_capacity(data.len());
        for (c, n) in data.iter() {
            codes.extend_from_slice(&c);
            counts.push(n as f64);
        }
        Dense { k, codes, counts }
    }

    fn rows(&self) -> impl Iterator<Item = (&[u8], f64)> {
        // `max(1)` keeps `chunks_exact` valid for zero attributes (no rows then).
        self.codes
            .chunks_exact(self.k.max(1))
            .zip(self.counts.iter().copied())
    }
}

/// Natural logs of the parameters, with inactive attributes dropped.
struct LogParams {
    ln_lambda: f64,
    ln_1m_lambda: f64,
    /// `(attribute, ln m row, ln u row)` for active attributes.
    rows: Vec<(usize, Vec<f64>, Vec<f64>)>,
}

impl LogParams {
    fn new(p: &Params, mask: &[bool]) -> Self {
        let rows = (0..p.m.len())
            .filter(|&k| mask[k])
            .map(|k| {
                let lm = p.m[k].iter().map(|x| x.ln()).collect();
                let lu = p.u[k].iter().map(|x| x.ln()).collect();
                (k, lm, lu)
            })
            .collect();
        LogParams {
            ln_lambda: p.lambda.ln(),
            ln_1m_lambda: (-p.lambda).ln_1p(),
            rows,
        }
    }

    /// (ln λ m(γ), ln (1−λ) u(γ)).
    fn class_logs(&self, codes: &[u8]) -> (f64, f64) {
        let mut lm = self.ln_lambda;
        let mut lu = self.ln_1m_lambda;
        for (k, m, u) in &self.rows {
            let c = codes[*k];
            if c != MISSING_LEVEL {
                lm += m[c as usize];
                lu += u[c as usize];
            }
        }
        (lm, lu)
    }
}

// ---------------------------------------------------------------------------
// Fitting
// ---------------------------------------------------------------------------

/// Settings of [`fit`].
#[derive(Debug, Clone, PartialEq)]
pub struct EmOptions {
    /// Iteration cap (default 1000).
    pub max_iterations: usize,
    /// Stop when the objective changes by less than this times its magnitude
    /// (default 1e-10; docs/methods.md §2).
    pub rel_tol_loglik: f64,
    /// Stop when no parameter moves by more than this (default 1e-8; docs/methods.md §2).
    pub param_tol: f64,
    /// Smallest allowed probability, for λ, 1 − λ and every m and u entry, so an
    /// empty level never reaches ln 0 (default 1e-9; docs/methods.md §2). Must be > 0 and
    /// below 1 / (largest number of levels).
    pub floor: f64,
    /// Keep u as given (e.g. estimated from random pairs); estimate λ and m only.
    pub fix_u: bool,
    /// Attributes to fit (`None` = all). Inactive attributes are neither used in the
    /// E-step nor updated; their parameters are returned as given.
    pub active: Option<Vec<bool>>,
    /// Dirichlet pseudo-count s ≥ 0 added to every level of every estimated m and u
    /// row (prior Dirichlet(1 + s)); 0 (default) is plain maximum likelihood.
    pub smoothing: f64,
    /// Fit under the level order: each attribute's weight log2(m/u) never increases
    /// from a better level to a worse one ([`ordered_rows`] in the M-step). Needs
    /// `smoothing > 0` and u estimated (not fixed); the floor is then not used.
    pub ordered: bool,
}

impl Default for EmOptions {
    fn default() -> Self {
        EmOptions {
            max_iterations: 1000,
            rel_tol_loglik: 1e-10,
            param_tol: 1e-8,
            floor: 1e-9,
            fix_u: false,
            active: None,
            smoothing: 0.0,
            ordered: false,
        }
    }
}

/// Result of [`fit`].
#[derive(Debug, Clone, PartialEq)]
pub struct EmFit {
    /// Fitted parameters (relabelled by [`orient`] unless u was fixed).
    pub params: Params,
    /// EM iterations done.
    pub iterations: usize,
    /// True when a stopping tolerance was met before the iteration cap.
    pub converged: bool,
    /// Objective at the start and after each iteration (`iterations + 1` values):
    /// the log-likelihood, or the penalised log-likelihood when smoothing > 0.
    /// Never decreases (up to rounding).
    pub loglik_trace: Vec<f64>,
    /// Plain log-likelihood (natural log) at the fitted parameters.
    pub loglik: f64,
    /// True when the classes came out swapped and were relabelled.
    pub swapped: bool,
}

/// Fit λ, m and u by EM on pattern counts, starting from `init`.
///
/// Errors (all [`Error::Internal`]: the callers promise valid inputs): no data,
/// parameters that do not match the data's levels or are invalid, or invalid options.
pub fn fit(data: &PatternCounts, init: &Params, opts: &EmOptions) -> Result<EmFit> {
    check_inputs(data, init, opts)?;
    let table = Dense::new(data);
    let mask = active_mask(opts.active.as_deref(), table.k);
    let total: f64 = table.counts.iter().sum();

    // Start inside the feasible set so that every step is a true EM step.
    let mut params = init.clone();
    params.lambda = params.lambda.clamp(opts.floor, 1.0 - opts.floor);
    for k in (0..table.k).filter(|&k| mask[k]) {
        if opts.ordered {
            let (m, u) = ordered_rows(&params.m[k], &params.u[k]);
            (params.m[k], params.u[k]) = (m, u);
        } else {
            params.m[k] = project_floor(&params.m[k], opts.floor);
            params.u[k] = project_floor(&params.u[k], opts.floor);
        }
    }

    let mut trace: Vec<f64> = Vec::new();
    let mut iterations = 0;
    let mut converged = false;
    let mut last_change = f64::INFINITY;
    loop {
        let (ll, next) = em_step(&table, &params, &mask, total, opts);
        let objective = ll + penalty(&params, &mask, opts);
        if let Some(&prev) = trace.last() {
            let small_ll = (objective - prev).abs() <= opts.rel_tol_loglik * objective.abs();
            if last_change < opts.param_tol || small_ll {
                converged = true;
            }
        }
        trace.push(objective);
        if converged || iterations >= opts.max_iterations {
            break;
        }
        last_change = max_change(&params, &next);
        params = next;
        iterations += 1;
    }

    let loglik = if opts.smoothing > 0.0 {
        loglik(data, &params, Some(&mask))
    } else {
        *trace.last().unwrap_or(&f64::NAN)
    };
    let swapped = !opts.fix_u && orient(&mut params, Some(&mask));
    Ok(EmFit {
        params,
        iterations,
        converged,
        loglik_trace: trace,
        loglik,
        swapped,
    })
}

fn check_inputs(data: &PatternCounts, init: &Params, opts: &EmOptions) -> Result<()> {
    if data.total() == 0 {
        return Err(Error::Internal(
            "EM needs at least one counted comparison vector".into(),
        ));
    }
    init.validate()?;
    if init.n_levels() != data.n_levels() {
        return Err(Error::Internal(format!(
            "starting parameters have levels {:?} but the data has levels {:?}",
            init.n_levels(),
            data.n_levels()
        )));
    }
    let max_levels = data.n_levels().iter().copied().max().unwrap_or(1);
    if !(opts.floor > 0.0 && opts.floor * (max_levels as f64) < 1.0) {
        return Err(Error::Internal(format!(
            "floor must be > 0 and below 1/{max_levels}, got {}",
            opts.floor
        )));
    }
    if !(opts.smoothing >= 0.0 && opts.smoothing.is_finite()) {
        return Err(Error::Internal(format!(
            "smoothing must be a finite number ≥ 0, got {}",
            opts.smoothing
        )));
    }
    if opts.ordered && (opts.smoothing <= 0.0 || opts.fix_u) {
        return Err(Error::Usage(
            "an ordered fit needs smoothing > 0 and u estimated, not fixed".into(),
        ));
    }
    if opts.rel_tol_loglik.is_nan() || opts.param_tol.is_nan() {
        return Err(Error::Internal("tolerances must be numbers".into()));
    }
    if let Some(a) = &opts.active {
        if a.len() != data.n_levels().len() {
            return Err(Error::Internal(format!(
                "active has {} entries for {} attributes",
                a.len(),
                data.n_levels().len()
            )));
        }
        if !a.iter().any(|&x| x) {
            return Err(Error::Internal("no attribute is active".into()));
        }
    }
    Ok(())
}

/// One E-step at `p` plus the M-step: returns (log-likelihood at `p`, next params).
fn em_step(
    table: &Dense,
    p: &Params,
    mask: &[bool],
    total: f64,
    opts: &EmOptions,
) -> (f64, Params) {
    let logs = LogParams::new(p, mask);
    let mut sum_m: Vec<Vec<f64>> = p.m.iter().map(|r| vec![0.0; r.len()]).collect();
    let mut sum_u = sum_m.clone();
    let mut mass_m = 0.0;
    let mut ll = 0.0;
    for (codes, n) in table.rows() {
        let (lm, lu) = logs.class_logs(codes);
        ll += n * log_add_exp(lm, lu);
        // g and 1 − g computed separately, so neither loses precision near 0.
        let wm = n * logistic(lm - lu);
        let wu = n * logistic(lu - lm);
        mass_m += wm;
        for (k, _, _) in &logs.rows {
            let c = codes[*k];
            if c != MISSING_LEVEL {
                sum_m[*k][c as usize] += wm;
                sum_u[*k][c as usize] += wu;
            }
        }
    }

    let mut next = p.clone();
    next.lambda = (mass_m / total).clamp(opts.floor, 1.0 - opts.floor);
    let s = opts.smoothing;
    for k in (0..mask.len()).filter(|&k| mask[k]) {
        if opts.ordered {
            let a: Vec<f64> = sum_m[k].iter().map(|x| x + s).collect();
            let b: Vec<f64> = sum_u[k].iter().map(|x| x + s).collect();
            (next.m[k], next.u[k]) = ordered_rows(&a, &b);
            continue;
        }
        if let Some(row) = m_step_row(&sum_m[k], s, opts.floor) {
            next.m[k] = row;
        }
        if !opts.fix_u {
            if let Some(row) = m_step_row(&sum_u[k], s, opts.floor) {
                next.u[k] = row;
            }
        }
    }
    (ll, next)
}

/// Maximiser of Σ_l (n_l + s) ln p_l over the floored simplex; `None` when the
/// attribute carries no information (no observations and no prior), so the row
/// is kept.
fn m_step_row(sums: &[f64], s: f64, floor: f64) -> Option<Vec<f64>> {
    let w: Vec<f64> = sums.iter().map(|x| x + s).collect();
    if w.iter().sum::<f64>() > 0.0 {
        Some(project_floor(&w, floor))
    } else {
        None
    }
}

/// Maximise Σ_l w_l ln p_l subject to Σ p_l = 1 and p_l ≥ floor (w_l ≥ 0, floor ·
/// len < 1). The solution is p_l = max(floor, w_l / τ) with τ set so the row sums
/// to 1 (KKT conditions); levels are moved to the floor until none is below it.
/// For a row of probabilities it is the smallest change that respects the floor.
fn project_floor(w: &[f64], floor: f64) -> Vec<f64> {
    let n = w.len();
    let mut at_floor = vec![false; n];
    loop {
        let n_floor = at_floor.iter().filter(|&&f| f).count();
        let free_mass = 1.0 - floor * n_floor as f64;
        let free_sum: f64 = (0..n).filter(|&l| !at_floor[l]).map(|l| w[l]).sum();
        let mut changed = false;
        for l in 0..n {
            if !at_floor[l] && (free_sum <= 0.0 || w[l] * free_mass / free_sum < floor) {
                at_floor[l] = true;
                changed = true;
            }
        }
        if !changed || at_floor.iter().all(|&f| f) {
            break;
        }
    }
    let n_floor = at_floor.iter().filter(|&&f| f).count();
    if n_floor == n {
        // Only reachable with all weights 0; callers never pass that.
        return vec![1.0 / n as f64; n];
    }
    let free_mass = 1.0 - floor * n_floor as f64;
    let free_sum: f64 = (0..n).filter(|&l| !at_floor[l]).map(|l| w[l]).sum();
    (0..n)
        .map(|l| {
            if at_floor[l] {
                floor
            } else {
                w[l] * free_mass / free_sum
            }
        })
        .collect()
}

/// Log prior of the smoothing: s Σ ln p over the estimated rows.
fn penalty(p: &Params, mask: &[bool], opts: &EmOptions) -> f64 {
    if opts.smoothing == 0.0 {
        return 0.0;
    }
    let mut sum = 0.0;
    for k in (0..mask.len()).filter(|&k| mask[k]) {
        sum += p.m[k].iter().map(|x| x.ln()).sum::<f64>();
        if !opts.fix_u {
            sum += p.u[k].iter().map(|x| x.ln()).sum::<f64>();
        }
    }
    opts.smoothing * sum
}

fn max_change(a: &Params, b: &Params) -> f64 {
    let rows = a.m.iter().zip(&b.m).chain(a.u.iter().zip(&b.u));
    rows.flat_map(|(x, y)| x.iter().zip(y).map(|(p, q)| (p - q).abs()))
        .fold((a.lambda - b.lambda).abs(), f64::max)
}

// ---------------------------------------------------------------------------
// The level order (pool adjacent violators)
// ---------------------------------------------------------------------------

/// m and u rows of one attribute under the level order: the maximiser of
/// Σ_l a_l ln m_l + b_l ln u_l (a_l, b_l ≥ 0: expected level counts among matches and
/// non-matches, pseudo-counts included) over probability rows whose likelihood ratio
/// m_l / u_l never increases from level 0 (best) to the last level (disagree).
///
/// Without the constraint the rows are a / Σa and b / Σb. Adjacent levels that violate
/// the order are pooled (pool adjacent violators): a pooled block B gets the ratio
/// (Σ_B a / Σa) / (Σ_B b / Σb), and within the block each level gets its share
/// (a_l + b_l) / Σ_B (a + b) of the block's m and u mass. This is the maximum likelihood
/// estimate of two multinomials under likelihood-ratio ordering (Dykstra, Kochar &
/// Robertson 1995, "Statistical inference for uniform stochastic ordering in several
/// populations", Ann. Statist. 23; cited from memory); a unit test checks optimality
/// numerically. Rows whose a or b are all 0 come back uniform on that side.
pub fn ordered_rows(a: &[f64], b: &[f64]) -> (Vec<f64>, Vec<f64>) {
    let n = a.len();
    let (sa, sb): (f64, f64) = (a.iter().sum(), b.iter().sum());
    if n == 0 || sa <= 0.0 || sb <= 0.0 {
        let uniform = |s: f64, r: &[f64]| -> Vec<f64> {
            if s > 0.0 {
                r.iter().map(|x| x / s).collect()
            } else {
                vec![1.0 / n.max(1) as f64; n]
            }
        };
        return (uniform(sa, a), uniform(sb, b));
    }
    // Blocks as (first level, a sum, b sum); ratios compared by cross-multiplying.
    let mut blocks: Vec<(usize, f64, f64)> = Vec::with_capacity(n);
    for l in 0..n {
        blocks.push((l, a[l], b[l]));
        while blocks.len() >= 2 {
            let (_, a2, b2) = blocks[blocks.len() - 1];
            let (_, a1, b1) = blocks[blocks.len() - 2];
            // Violation: the better block's ratio a1/b1 is below the worse one's a2/b2.
            if a1 * b2 < a2 * b1 {
                blocks.pop();
                if let Some(last) = blocks.last_mut() {
                    last.1 += a2;
                    last.2 += b2;
                }
            } else {
                break;
            }
        }
    }
    let (mut m, mut u) = (vec![0.0; n], vec![0.0; n]);
    for (i, &(start, ab, bb)) in blocks.iter().enumerate() {
        let end = blocks.get(i + 1).map_or(n, |x| x.0);
        let total: f64 = (start..end).map(|l| a[l] + b[l]).sum();
        for l in start..end {
            let share = if total > 0.0 {
                (a[l] + b[l]) / total
            } else {
                1.0 / (end - start) as f64
            };
            m[l] = ab / sa * share;
            u[l] = bb / sb * share;
        }
    }
    (m, u)
}

// ---------------------------------------------------------------------------
// Latent classes (more than two)
// ---------------------------------------------------------------------------

/// Parameters of a latent class model with conditionally independent categorical
/// attributes: class shares and, per class, attribute and level, P(level | class).
#[derive(Debug, Clone, PartialEq)]
pub struct ClassParams {
    /// Share of each class among the pairs; sums to 1.
    pub share: Vec<f64>,
    /// `prob[c][k][l]` = P(attribute k at level l | class c); each row sums to 1.
    pub prob: Vec<Vec<Vec<f64>>>,
}

impl ClassParams {
    /// Number of classes.
    pub fn classes(&self) -> usize {
        self.share.len()
    }

    /// ln(share_c · Π_k P(γ_k | c)) per class (missing attributes left out).
    pub fn class_logs(&self, codes: &[u8]) -> Vec<f64> {
        (0..self.classes())
            .map(|c| {
                let mut x = self.share[c].ln();
                for (k, &code) in codes.iter().enumerate() {
                    if code != MISSING_LEVEL {
                        if let Some(p) = self.prob[c].get(k).and_then(|r| r.get(code as usize)) {
                            x += p.ln();
                        }
                    }
                }
                x
            })
            .collect()
    }

    /// Posterior class probabilities of one comparison vector.
    pub fn posteriors(&self, codes: &[u8]) -> Vec<f64> {
        let logs = self.class_logs(codes);
        let hi = logs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let e: Vec<f64> = logs.iter().map(|x| (x - hi).exp()).collect();
        let s: f64 = e.iter().sum();
        e.iter().map(|x| x / s).collect()
    }

    /// Free parameters: (classes − 1) shares plus classes × Σ_k (levels_k − 1).
    pub fn free_parameters(&self) -> usize {
        let per_class: usize = self.prob.first().map_or(0, |rows| {
            rows.iter().map(|r| r.len().saturating_sub(1)).sum()
        });
        self.classes().saturating_sub(1) + self.classes() * per_class
    }
}

/// Settings of [`fit_classes`].
#[derive(Debug, Clone, PartialEq)]
pub struct ClassOptions {
    /// Number of latent classes (≥ 2).
    pub classes: usize,
    /// Random starts; the fit with the highest objective is kept (≥ 1).
    pub starts: usize,
    /// Seed of the random starts.
    pub seed: u64,
    /// Iteration cap per start.
    pub max_iterations: usize,
    /// Stop when the objective changes by less than this times its magnitude.
    pub rel_tol_loglik: f64,
    /// Dirichlet pseudo-count s > 0 per level of every class row (prior
    /// Dirichlet(1 + s)); keeps every probability above 0.
    pub smoothing: f64,
}

impl Default for ClassOptions {
    fn default() -> Self {
        ClassOptions {
            classes: 3,
            starts: 4,
            seed: 1,
            max_iterations: 500,
            rel_tol_loglik: 1e-9,
            smoothing: 0.5,
        }
    }
}

/// Result of [`fit_classes`].
#[derive(Debug, Clone, PartialEq)]
pub struct ClassFit {
    /// Fitted parameters of the best start.
    pub params: ClassParams,
    /// Plain log-likelihood (natural log) at the fitted parameters.
    pub loglik: f64,
    /// Penalised log-likelihood after each iteration of the best start; never
    /// decreases (up to rounding).
    pub loglik_trace: Vec<f64>,
    /// Iterations of the best start.
    pub iterations: usize,
    /// True when the best start met the tolerance before the iteration cap.
    pub converged: bool,
    /// Objective reached by every start, in start order.
    pub start_objectives: Vec<f64>,
}

impl ClassFit {
    /// Bayesian information criterion −2ℓ + p ln n (Schwarz 1978), n = pairs counted.
    pub fn bic(&self, pairs: u64) -> f64 {
        -2.0 * self.loglik + self.params.free_parameters() as f64 * (pairs.max(1) as f64).ln()
    }
}

/// Fit a latent class model with `opts.classes` classes by EM on pattern counts
/// (Goodman 1974; the multi-class form of the Fellegi–Sunter mixture, Winkler 1993).
///
/// Each start draws random class responsibilities per pattern from the seeded
/// generator, then alternates M-step (shares and level probabilities from expected
/// counts plus `smoothing` pseudo-counts) and E-step. The objective is the penalised
/// log-likelihood ℓ + s Σ_c Σ_k Σ_l ln P(l | c), which EM never decreases. The start
/// with the highest objective is kept; ties keep the earlier start, so the result is
/// deterministic.
pub fn fit_classes(data: &PatternCounts, opts: &ClassOptions) -> Result<ClassFit> {
    if data.total() == 0 {
        return Err(Error::Usage(
            "EM needs at least one counted comparison vector".into(),
        ));
    }
    if opts.classes < 2 || opts.starts == 0 {
        return Err(Error::Usage(format!(
            "a latent class fit needs at least 2 classes and 1 start, got {} and {}",
            opts.classes, opts.starts
        )));
    }
    if !(opts.smoothing > 0.0 && opts.smoothing.is_finite()) {
        return Err(Error::Usage(format!(
            "latent class smoothing must be a finite number > 0, got {}",
            opts.smoothing
        )));
    }
    let table = Dense::new(data);
    let fits: Vec<ClassFit> = (0..opts.starts)
        .map(|s| class_start(&table, data.n_levels(), opts, s as u64))
        .collect();
    let objectives: Vec<f64> = fits
        .iter()
        .map(|f| *f.loglik_trace.last().unwrap_or(&f64::NEG_INFINITY))
        .collect();
    let mut best = 0;
    for (i, &o) in objectives.iter().enumerate() {
        if o > objectives[best] {
            best = i;
        }
    }
    let mut fit = fits
        .into_iter()
        .nth(best)
        .ok_or_else(|| Error::Internal("latent class fit: no start produced a result".into()))?;
    fit.start_objectives = objectives;
    Ok(fit)
}

/// One start of [`fit_classes`].
fn class_start(table: &Dense, n_levels: &[usize], opts: &ClassOptions, start: u64) -> ClassFit {
    let c_n = opts.classes;
    let mut rng = crate::util::Rng::new(opts.seed ^ start.wrapping_mul(0x9E37_79B9_7F4A_7C15));
    let n_rows = table.counts.len();
    // Responsibilities per pattern, random at the start.
    let mut resp: Vec<f64> = Vec::with_capacity(n_rows * c_n);
    for _ in 0..n_rows {
        let raw: Vec<f64> = (0..c_n)
            .map(|_| 0.05 + rng.below(1_000_000) as f64 / 1e6)
            .collect();
        let s: f64 = raw.iter().sum();
        resp.extend(raw.iter().map(|x| x / s));
    }
    let total: f64 = table.counts.iter().sum();
    let mut trace = Vec::new();
    let mut params = ClassParams {
        share: vec![1.0 / c_n as f64; c_n],
        prob: vec![n_levels.iter().map(|&l| vec![1.0 / l as f64; l]).collect(); c_n],
    };
    let mut iterations = 0;
    let mut converged = false;
    let mut loglik = f64::NEG_INFINITY;
    while iterations < opts.max_iterations.max(1) {
        // M-step from the responsibilities.
        let mut mass = vec![0.0; c_n];
        let mut sums: Vec<Vec<Vec<f64>>> =
            vec![n_levels.iter().map(|&l| vec![0.0; l]).collect(); c_n];
        for (i, (codes, n)) in table.rows().enumerate() {
            for c in 0..c_n {
                let w = n * resp[i * c_n + c];
                mass[c] += w;
                for (k, &code) in codes.iter().enumerate() {
                    if code != MISSING_LEVEL {
                        sums[c][k][code as usize] += w;
                    }
                }
            }
        }
        for c in 0..c_n {
            params.share[c] = mass[c] / total;
            for (k, row) in sums[c].iter().enumerate() {
                let s: f64 = row.iter().map(|x| x + opts.smoothing).sum();
                params.prob[c][k] = row.iter().map(|x| (x + opts.smoothing) / s).collect();
            }
        }
        // E-step and objective at the new parameters.
        let mut ll = 0.0;
        for (i, (codes, n)) in table.rows().enumerate() {
            let logs = params.class_logs(codes);
            let hi = logs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
            let s: f64 = logs.iter().map(|x| (x - hi).exp()).sum();
            let norm = hi + s.ln();
            ll += n * norm;
            for c in 0..c_n {
                resp[i * c_n + c] = (logs[c] - norm).exp();
            }
        }
        let penalty: f64 = params
            .prob
            .iter()
            .flatten()
            .flatten()
            .map(|p| p.ln())
            .sum::<f64>()
            * opts.smoothing;
        let objective = ll + penalty;
        iterations += 1;
        loglik = ll;
        let done = trace.last().is_some_and(|&prev: &f64| {
            (objective - prev).abs() <= opts.rel_tol_loglik * objective.abs()
        });
        trace.push(objective);
        if done {
            converged = true;
            break;
        }
    }
    ClassFit {
        params,
        loglik,
        loglik_trace: trace,
        iterations,
        converged,
        start_objectives: Vec::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::util::rng::Rng;
    use proptest::prelude::*;
    use std::collections::BTreeMap;

    // -- helpers ------------------------------------------------------------

    /// Draw a level from a probability row.
    fn draw(rng: &mut Rng, probs: &[f64]) -> u8 {
        let r = rng.next_f64();
        let mut acc = 0.0;
        for (l, p) in probs.iter().enumerate() {
            acc += p;
            if r < acc {
                return l as u8;
            }
        }
        (probs.len() - 1) as u8
    }

    /// Synthetic comparison vectors with known parameters (the generator idea of
    /// `tests/reference/em_reference.py`, on our own RNG): each pair is a match with probability
    /// λ, then every attribute is missing with probability `missing[k]`, otherwise
    /// drawn from m or u. Returns the counts and the number of true matches.
    fn generate(truth: &Params, missing: &[f64], n: usize, seed: u64) -> (PatternCounts, u64) {
        let mut rng = Rng::new(seed);
        let mut data = PatternCounts::new(truth.n_levels());
        let mut matches = 0;
        let mut codes = vec![0u8; truth.m.len()];
        for _ in 0..n {
            let is_match = rng.next_f64() < truth.lambda;
            matches += is_match as u64;
            for k in 0..codes.len() {
                let row = if is_match { &truth.m[k] } else { &truth.u[k] };
                codes[k] = if rng.next_f64() < missing[k] {
                    MISSING_LEVEL
                } else {
                    draw(&mut rng, row)
                };
            }
            data.add(&codes, 1).unwrap();
        }
        (data, matches)
    }

    fn synthetic_truth() -> Params {
        // Level 0 = strongest agreement, last level = disagree.
        Params {
            lambda: 0.05,
            m: vec![
                vec![0.80, 0.15, 0.05],
                vec![0.85, 0.10, 0.05],
                vec![0.70, 0.15, 0.10, 0.05],
                vec![0.90, 0.10],
            ],
            u: vec![
                vec![0.03, 0.12, 0.85],
                vec![0.02, 0.08, 0.90],
                vec![0.01, 0.05, 0.14, 0.80],
                vec![0.10, 0.90],
            ],
        }
    }

    fn assert_close(what: &str, got: f64, want: f64, tol: f64) {
        assert!(
            (got - want).abs() <= tol,
            "{what}: expected {want}, got {got} (tolerance {tol})"
        );
    }

    fn assert_params_close(got: &Params, want: &Params, tol_lambda: f64, tol_m: f64, tol_u: f64) {
        assert_close("λ", got.lambda, want.lambda, tol_lambda);
        for k in 0..want.m.len() {
            for l in 0..want.m[k].len() {
                assert_close(&format!("m[{k}][{l}]"), got.m[k][l], want.m[k][l], tol_m);
                assert_close(&format!("u[{k}][{l}]"), got.u[k][l], want.u[k][l], tol_u);
            }
        }
    }

    fn rows_sum_to_one(p: &Params) {
        for row in p.m.iter().chain(&p.u) {
            assert_close("row sum", row.iter().sum(), 1.0, 1e-12);
        }
    }

    /// The committed reference patterns (`tests/data/em_reference_patterns.csv`,
    /// written by `tests/reference/em_reference.py`). That file codes 0 = disagree and
    /// 2 = agree; samekey codes 0 = strongest agreement, so levels are mirrored.
    fn reference_patterns() -> PatternCounts {
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/tests/data/em_reference_patterns.csv"
        );
        let mut rdr = csv::Reader::from_path(path).unwrap();
        let mut data = PatternCounts::new(vec![3; 5]);
        for row in rdr.records() {
            let row = row.unwrap();
            let codes: Vec<u8> = (0..5).map(|k| 2 - row[k].parse::<u8>().unwrap()).collect();
            data.add(&codes, row[5].parse().unwrap()).unwrap();
        }
        data
    }

    /// Mirror a reference-order row (disagree, partial, agree) into samekey order.
    fn mirrored(rows: [[f64; 3]; 5]) -> Vec<Vec<f64>> {
        rows.iter()
            .map(|r| r.iter().rev().copied().collect())
            .collect()
    }

    /// numpy-EM estimates from docs/check-values.md §8 (source: `tests/reference/em_reference.py`, numpy
    /// 2.4.6, seed 20240601; stepmix 3.0.0 agrees to ≤ 7e-7). Printed with 6
    /// decimals, so they carry up to 5e-7 rounding.
    fn reference_fit() -> Params {
        Params {
            lambda: 0.040_165_85,
            m: mirrored([
                [0.037011, 0.159844, 0.803145],
                [0.035009, 0.072305, 0.892685],
                [0.028107, 0.114597, 0.857296],
                [0.314050, 0.095389, 0.590562],
                [0.108751, 0.189224, 0.702025],
            ]),
            u: mirrored([
                [0.799360, 0.151338, 0.049301],
                [0.899441, 0.079759, 0.020800],
                [0.847783, 0.142251, 0.009966],
                [0.970195, 0.020221, 0.009585],
                [0.701134, 0.199097, 0.099770],
            ]),
        }
    }

    fn tight() -> EmOptions {
        EmOptions {
            rel_tol_loglik: 1e-15,
            param_tol: 1e-12,
            max_iterations: 5000,
            ..EmOptions::default()
        }
    }

    // -- pattern counts -----------------------------------------------------

    #[test]
    fn counts_add_get_iter_total() {
        let mut c = PatternCounts::new(vec![3, 2]);
        c.add(&[0, 1], 5).unwrap();
        c.add(&[MISSING_LEVEL, 0], 2).unwrap();
        c.add(&[0, 1], 1).unwrap();
        assert_eq!(c.total(), 8);
        assert_eq!(c.len(), 2);
        assert_eq!(c.get(&[0, 1]), 6);
        assert_eq!(c.get(&[2, 1]), 0);
        let all: Vec<_> = c.iter().collect();
        assert_eq!(all, vec![(vec![0, 1], 6), (vec![MISSING_LEVEL, 0], 2)]);
    }

    #[test]
    fn counts_reject_bad_vectors() {
        let mut c = PatternCounts::new(vec![3, 2]);
        let e = c.add(&[0], 1).unwrap_err().to_string();
        assert!(e.contains("1 attributes, expected 2"), "{e}");
        let e = c.add(&[3, 0], 1).unwrap_err().to_string();
        assert!(e.contains("attribute 0: level 3 is out of range"), "{e}");
        assert_eq!(c.total(), 0);
        let other = PatternCounts::new(vec![3, 3]);
        assert!(c.merge(other).is_err());
    }

    #[test]
    fn counts_switch_to_wide_keys_past_64_bits() {
        // 9 attributes × 8 bits (254 levels + missing) = 72 bits: not packable.
        let mut c = PatternCounts::new(vec![254; 9]);
        assert!(c.bits.is_none());
        let v = [253, 0, 1, 2, MISSING_LEVEL, 5, 6, 7, 200];
        c.add(&v, 3).unwrap();
        c.add(&v, 4).unwrap();
        assert_eq!(c.get(&v), 7);
        assert_eq!(c.iter().next(), Some((v.to_vec(), 7)));
        // 8 attributes × 8 bits = 64: packable.
        assert!(PatternCounts::new(vec![254; 8]).bits.is_some());
    }

    fn vectors(k: usize, levels: u8) -> impl Strategy<Value = Vec<(Vec<u8>, u64)>> {
        let code = prop_oneof![4 => 0..levels, 1 => Just(MISSING_LEVEL)];
        prop::collection::vec((prop::collection::vec(code, k), 1u64..50), 0..60)
    }

    proptest! {
        /// Counting, in one go or split in two and merged, matches a plain map —
        /// for packed (3 × 3 levels) and wide (9 × 200 levels) keys.
        #[test]
        fn counts_match_a_simple_model(
            small in vectors(3, 3),
            large in vectors(9, 200),
            split in 0usize..60,
        ) {
            for (n_levels, rows) in [(vec![3usize; 3], small), (vec![200; 9], large)] {
                let mut model = BTreeMap::new();
                let mut whole = PatternCounts::new(n_levels.clone());
                let mut a = PatternCounts::new(n_levels.clone());
                let mut b = PatternCounts::new(n_levels);
                for (i, (v, n)) in rows.iter().enumerate() {
                    *model.entry(v.clone()).or_insert(0u64) += n;
                    whole.add(v, *n).unwrap();
                    if i < split { a.add(v, *n).unwrap() } else { b.add(v, *n).unwrap() }
                }
                a.merge(b).unwrap();
                let want: Vec<_> = model.into_iter().collect();
                prop_assert_eq!(whole.iter().collect::<Vec<_>>(), want.clone());
                prop_assert_eq!(a.iter().collect::<Vec<_>>(), want.clone());
                prop_assert_eq!(a.total(), want.iter().map(|x| x.1).sum::<u64>());
                prop_assert_eq!(a.len(), want.len());
            }
        }
    }

    // -- parameters and scoring ----------------------------------------------

    #[test]
    fn default_init_favours_level_zero_for_m_and_last_for_u() {
        let p = default_init(&[3, 2, 1, 4], 0.1);
        p.validate().unwrap();
        assert_eq!(p.m[0], vec![0.9, 0.1 * 2.0 / 3.0, 0.1 / 3.0]);
        assert_eq!(p.u[0], vec![0.1 / 3.0, 0.1 * 2.0 / 3.0, 0.9]);
        assert_eq!(p.m[1], vec![0.9, 0.1]);
        assert_eq!(p.m[2], vec![1.0]);
        assert!(p.m[3].windows(2).all(|w| w[0] > w[1]));
        rows_sum_to_one(&p);
    }

    #[test]
    fn validate_names_the_problem() {
        let mut p = default_init(&[2, 2], 0.1);
        p.lambda = 1.0;
        assert!(p.validate().unwrap_err().to_string().contains("λ"));
        let mut p = default_init(&[2, 2], 0.1);
        p.u[1] = vec![0.5, 0.6];
        let e = p.validate().unwrap_err().to_string();
        assert!(e.contains("attribute 1: u sums to"), "{e}");
        let mut p = default_init(&[2, 2], 0.1);
        p.m[0] = vec![1.0];
        assert!(p.validate().unwrap_err().to_string().contains("levels"));
    }

    #[test]
    fn weights_and_posterior_follow_the_formulas() {
        // Binary-field weights (Fellegi & Sunter 1969; docs/methods.md §1): agree
        // log2(m/u), disagree log2((1−m)/(1−u)); missing adds 0.
        let p = Params {
            lambda: 0.2,
            m: vec![vec![0.9, 0.1], vec![0.8, 0.2]],
            u: vec![vec![0.1, 0.9], vec![0.25, 0.75]],
        };
        let w = p.weights();
        assert_close("w agree", w[0][0], (0.9f64 / 0.1).log2(), 1e-15);
        assert_close("w disagree", w[1][1], (0.2f64 / 0.75).log2(), 1e-15);
        let codes = [0, 1];
        assert_close("W", evidence_bits(&p, &codes), w[0][0] + w[1][1], 1e-15);
        assert_eq!(evidence_bits(&p, &[MISSING_LEVEL, MISSING_LEVEL]), 0.0);
        // Bayes' rule directly: λ m(γ) / (λ m(γ) + (1 − λ) u(γ)).
        let (mg, ug) = (0.9 * 0.2, 0.1 * 0.75);
        let want = 0.2 * mg / (0.2 * mg + 0.8 * ug);
        assert_close("P(M|γ)", posterior(&p, &codes), want, 1e-15);
        assert_close(
            "P(M|missing)",
            posterior(&p, &[MISSING_LEVEL, 1]),
            {
                let (mg, ug) = (0.2, 0.75);
                0.2 * mg / (0.2 * mg + 0.8 * ug)
            },
            1e-15,
        );
        // Extreme weights stay in [0, 1] without NaN.
        let q = Params {
            lambda: 0.5,
            m: vec![vec![1.0, 0.0]],
            u: vec![vec![0.0, 1.0]],
        };
        assert_eq!(posterior(&q, &[0]), 1.0);
        assert_eq!(posterior(&q, &[1]), 0.0);
    }

    #[test]
    fn orient_swaps_only_when_the_match_class_is_upside_down() {
        let p = default_init(&[3, 3], 0.1);
        let mut q = p.swapped();
        assert!(orient(&mut q, None));
        assert_eq!((q.m.clone(), q.u.clone()), (p.m.clone(), p.u.clone()));
        assert_close("λ", q.lambda, p.lambda, 1e-15);
        let mut r = p.clone();
        assert!(!orient(&mut r, None));
        assert_eq!(r, p);
    }

    #[test]
    fn floor_projection_is_feasible_and_exact_when_not_binding() {
        let p = project_floor(&[5.0, 0.0, 3.0, 2.0], 0.01);
        assert_eq!(p[1], 0.01);
        assert_close("sum", p.iter().sum(), 1.0, 1e-15);
        // Not binding: plain normalisation.
        assert_eq!(project_floor(&[1.0, 3.0], 1e-9), vec![0.25, 0.75]);
        // A level pushed below the floor by renormalisation is floored too.
        let p = project_floor(&[1.0, 0.0, 0.0995], 0.1);
        assert!(p.iter().all(|&x| x >= 0.1 - 1e-15), "{p:?}");
        assert_close("sum", p.iter().sum(), 1.0, 1e-15);
    }

    // -- fitting: external reference ---------------------------------------

    /// docs/check-values.md §8: EM on the committed reference patterns reproduces the
    /// numpy-EM / stepmix 3.0.0 estimates (tolerance 1e-5, as docs/check-values.md
    /// advises; the published values are rounded to 6 decimals).
    #[test]
    fn reference_patterns_reproduce_check_values() {
        let data = reference_patterns();
        assert_eq!(data.total(), 50_000);
        // Same start as the reference: λ0 = 0.1, m0 = 0.9 on agree and 0.05 on the
        // other levels, u0 = marginal level frequencies.
        let init = Params {
            lambda: 0.1,
            m: vec![vec![0.9, 0.05, 0.05]; 5],
            u: level_frequencies(&data),
        };
        let fit = fit(&data, &init, &tight()).unwrap();
        assert!(fit.converged);
        assert!(!fit.swapped);
        assert_params_close(&fit.params, &reference_fit(), 1e-7, 1e-5, 1e-5);
        rows_sum_to_one(&fit.params);
        // Log-likelihood at the optimum and at the true parameters (docs/check-values.md §8).
        assert_close("ℓ at optimum", fit.loglik, -130131.6464, 1e-3);
        let truth = Params {
            lambda: 0.04,
            m: mirrored([
                [0.05, 0.15, 0.80],
                [0.03, 0.07, 0.90],
                [0.04, 0.11, 0.85],
                [0.30, 0.10, 0.60],
                [0.10, 0.20, 0.70],
            ]),
            u: mirrored([
                [0.80, 0.15, 0.05],
                [0.90, 0.08, 0.02],
                [0.85, 0.14, 0.01],
                [0.97, 0.02, 0.01],
                [0.70, 0.20, 0.10],
            ]),
        };
        assert_close(
            "ℓ at truth",
            loglik(&data, &truth, None),
            -130144.7060,
            1e-3,
        );
        assert!(fit.loglik >= loglik(&data, &truth, None));

        // Partial weights log2(m/u) (docs/check-values.md §8, reference order
        // disagree / partial / agree, 4 decimals).
        let published = [
            [-4.4328, 0.0789, 4.0260],
            [-4.6832, -0.1416, 5.4235],
            [-4.9147, -0.3119, 6.4266],
            [-1.6273, 2.2380, 5.9452],
            [-2.6887, -0.0734, 2.8148],
        ];
        let w = fit.params.weights();
        for k in 0..5 {
            for l in 0..3 {
                assert_close(&format!("w[{k}][{l}]"), w[k][2 - l], published[k][l], 1e-3);
            }
        }

        // Composite weights and posteriors (docs/check-values.md §8; patterns in the
        // reference's coding, mirrored here).
        let rows: [([u8; 5], f64, f64); 6] = [
            ([2, 2, 2, 2, 2], 24.6361, 0.999999),
            ([2, 2, 2, 0, 2], 17.0636, 0.999826),
            ([1, 2, 2, 0, 0], 7.6130, 0.891215),
            ([2, 2, 0, 0, 0], 0.2188, 0.046440),
            ([0, 2, 0, 0, 2], -2.7364, 0.006240),
            ([0, 0, 0, 0, 0], -18.3466, 0.000000),
        ];
        for (pattern, weight, post) in rows {
            let codes: Vec<u8> = pattern.iter().map(|c| 2 - c).collect();
            assert_close("W", evidence_bits(&fit.params, &codes), weight, 1e-3);
            assert_close("P(M|γ)", posterior(&fit.params, &codes), post, 2e-6);
        }
    }

    /// docs/check-values.md §8: a start from swapped classes reaches the label-switched
    /// maximum, which `orient` turns back.
    #[test]
    fn swapped_start_is_relabelled() {
        let data = reference_patterns();
        let init = default_init(&[3; 5], 0.1).swapped();
        let fit = fit(&data, &init, &tight()).unwrap();
        assert!(fit.swapped);
        assert_params_close(&fit.params, &reference_fit(), 1e-7, 1e-5, 1e-5);
    }

    // -- fitting: recovery on synthetic data --------------------------------

    /// Parameter recovery: 100,000 synthetic pairs (λ = 0.05, so ~5,000 matches)
    /// with some missing values. Tolerances: λ ± 0.005; m ± 0.03 (≈ 4 standard
    /// errors of a proportion from 5,000 matches, sqrt(0.25/5000) ≈ 0.007); u ± 0.01
    /// (≈ 6 standard errors from 95,000 non-matches).
    #[test]
    fn recovers_known_parameters() {
        let truth = synthetic_truth();
        let (data, matches) = generate(&truth, &[0.0, 0.1, 0.2, 0.05], 100_000, 11);
        assert!((4_500..5_500).contains(&matches));
        let init = default_init(&truth.n_levels(), 0.1);
        let fit = fit(&data, &init, &EmOptions::default()).unwrap();
        assert!(fit.converged, "{} iterations", fit.iterations);
        assert_params_close(&fit.params, &truth, 0.005, 0.03, 0.01);
        rows_sum_to_one(&fit.params);
        // The optimum is at least as likely as the truth.
        assert!(fit.loglik >= loglik(&data, &truth, None));
    }

    /// With u fixed at the truth, λ and m are recovered and u is untouched.
    #[test]
    fn fixed_u_recovers_lambda_and_m() {
        let truth = synthetic_truth();
        let (data, _) = generate(&truth, &[0.0; 4], 60_000, 5);
        let mut init = default_init(&truth.n_levels(), 0.2);
        init.u = truth.u.clone();
        let opts = EmOptions {
            fix_u: true,
            ..EmOptions::default()
        };
        let fit = fit(&data, &init, &opts).unwrap();
        assert_eq!(fit.params.u, truth.u);
        assert!(!fit.swapped);
        // ~3,000 matches: m ± 0.04 (≈ 4.5 standard errors), λ ± 0.005.
        assert_params_close(&fit.params, &truth, 0.005, 0.04, 0.0);
    }

    /// An inactive attribute is neither used nor updated: the fit equals the fit on
    /// data in which that attribute is missing everywhere.
    #[test]
    fn inactive_attribute_is_left_out() {
        let truth = synthetic_truth();
        let (data, _) = generate(&truth, &[0.0; 4], 20_000, 3);
        let mut blanked = PatternCounts::new(truth.n_levels());
        for (mut codes, n) in data.iter() {
            codes[3] = MISSING_LEVEL;
            blanked.add(&codes, n).unwrap();
        }
        let init = default_init(&truth.n_levels(), 0.1);
        let opts = EmOptions {
            active: Some(vec![true, true, true, false]),
            ..tight()
        };
        let a = fit(&data, &init, &opts).unwrap();
        let b = fit(&blanked, &init, &tight()).unwrap();
        assert_eq!(a.params.m[3], init.m[3]);
        assert_eq!(a.params.u[3], init.u[3]);
        let mut b_params = b.params.clone();
        b_params.m[3] = init.m[3].clone();
        b_params.u[3] = init.u[3].clone();
        assert_params_close(&a.params, &b_params, 1e-9, 1e-9, 1e-9);
        assert_close("ℓ", a.loglik, b.loglik, 1e-6);
    }

    /// Smoothing is a Dirichlet(1 + s) prior: at convergence every estimated row
    /// satisfies m_k(l) = (Σ_j n_j g_j 1[γ_jk = l] + s) / (Σ_j n_j g_j 1[γ_jk seen] + L_k s),
    /// and an unseen level gets a real share instead of the floor.
    #[test]
    fn smoothing_is_the_documented_prior() {
        let mut data = PatternCounts::new(vec![3, 2, 2]);
        // Level 1 of attribute 0 never occurs.
        for (v, n) in [
            ([0, 0, 0], 40),
            ([0, 0, 1], 6),
            ([2, 1, 1], 300),
            ([2, 0, 1], 30),
            ([0, 1, 1], 20),
            ([2, 1, 0], 15),
        ] {
            data.add(&v, n).unwrap();
        }
        let s = 0.5;
        // Stop on parameter change only: the objective flattens before the
        // parameters settle.
        let opts = EmOptions {
            smoothing: s,
            rel_tol_loglik: 0.0,
            ..tight()
        };
        let fit = fit(&data, &default_init(&[3, 2, 2], 0.2), &opts).unwrap();
        assert!(fit.converged);
        let p = &fit.params;
        let mut num_m = vec![vec![0.0; 3], vec![0.0; 2], vec![0.0; 2]];
        let mut num_u = num_m.clone();
        for (codes, n) in data.iter() {
            let g = posterior(p, &codes);
            for (k, &c) in codes.iter().enumerate() {
                num_m[k][c as usize] += n as f64 * g;
                num_u[k][c as usize] += n as f64 * (1.0 - g);
            }
        }
        for k in 0..3 {
            let l = num_m[k].len() as f64;
            let (tm, tu): (f64, f64) = (num_m[k].iter().sum(), num_u[k].iter().sum());
            for i in 0..num_m[k].len() {
                assert_close("m", p.m[k][i], (num_m[k][i] + s) / (tm + l * s), 1e-9);
                assert_close("u", p.u[k][i], (num_u[k][i] + s) / (tu + l * s), 1e-9);
            }
        }
        assert!(p.m[0][1] > 1e-4 && p.u[0][1] > 1e-4, "{p:?}");
        // The trace holds the penalised objective, the plain ℓ is reported apart.
        let penalised = fit.loglik + penalty(p, &[true; 3], &opts);
        assert_close(
            "objective",
            *fit.loglik_trace.last().unwrap(),
            penalised,
            1e-9,
        );
        assert_close("ℓ", fit.loglik, loglik(&data, p, None), 1e-9);
    }

    #[test]
    fn fit_rejects_bad_input() {
        let data = PatternCounts::new(vec![2, 2]);
        let init = default_init(&[2, 2], 0.1);
        let e = fit(&data, &init, &EmOptions::default()).unwrap_err();
        assert!(e.to_string().contains("at least one"), "{e}");
        let mut data = PatternCounts::new(vec![2, 2]);
        data.add(&[0, 1], 3).unwrap();
        let e = fit(&data, &default_init(&[2, 3], 0.1), &EmOptions::default()).unwrap_err();
        assert!(e.to_string().contains("levels"), "{e}");
        for bad in [
            EmOptions {
                floor: 0.0,
                ..EmOptions::default()
            },
            EmOptions {
                floor: 0.5,
                ..EmOptions::default()
            },
            EmOptions {
                smoothing: -1.0,
                ..EmOptions::default()
            },
            EmOptions {
                active: Some(vec![true]),
                ..EmOptions::default()
            },
            EmOptions {
                active: Some(vec![false, false]),
                ..EmOptions::default()
            },
        ] {
            assert!(fit(&data, &init, &bad).is_err(), "{bad:?}");
        }
    }

    #[test]
    fn iteration_cap_is_respected() {
        let data = reference_patterns();
        let opts = EmOptions {
            max_iterations: 3,
            ..tight()
        };
        let fit = fit(&data, &default_init(&[3; 5], 0.1), &opts).unwrap();
        assert_eq!(fit.iterations, 3);
        assert!(!fit.converged);
        assert_eq!(fit.loglik_trace.len(), 4);
    }

    /// Three planted classes (same person, household, unrelated; values invented for
    /// the test): the latent class fit recovers shares and profiles up to the order of
    /// the classes, keeps the best of several starts and gives the same result twice.
    #[test]
    fn latent_classes_recover_a_planted_model() {
        let profiles = [
            // (share, P(agree) per attribute: family name, given name, birth date,
            // street, phone). Five binary attributes identify three classes (Goodman 1974).
            (0.3, [0.95, 0.9, 0.97, 0.8, 0.7]),
            (0.2, [0.9, 0.05, 0.03, 0.9, 0.6]),
            (0.5, [0.05, 0.05, 0.01, 0.02, 0.01]),
        ];
        let mut rng = Rng::new(7);
        let mut data = PatternCounts::new(vec![2; 5]);
        for _ in 0..60_000 {
            let x = rng.below(1_000_000) as f64 / 1e6;
            let c = if x < 0.3 {
                0
            } else if x < 0.5 {
                1
            } else {
                2
            };
            let codes: Vec<u8> = profiles[c]
                .1
                .iter()
                .map(|&p| u8::from(rng.below(1_000_000) as f64 / 1e6 >= p))
                .collect();
            data.add(&codes, 1).unwrap();
        }
        let opts = ClassOptions {
            classes: 3,
            starts: 4,
            ..ClassOptions::default()
        };
        let fit = fit_classes(&data, &opts).unwrap();
        assert_eq!(fit, fit_classes(&data, &opts).unwrap());
        assert_eq!(fit.start_objectives.len(), 4);
        let best = fit
            .start_objectives
            .iter()
            .copied()
            .fold(f64::MIN, f64::max);
        assert_eq!(*fit.loglik_trace.last().unwrap(), best);
        for (share, agree) in profiles {
            let c = (0..3)
                .min_by(|&x, &y| {
                    let d = |c: usize| (fit.params.share[c] - share).abs();
                    d(x).total_cmp(&d(y))
                })
                .unwrap();
            assert_close("share", fit.params.share[c], share, 0.02);
            for (k, &p) in agree.iter().enumerate() {
                assert_close("P(agree)", fit.params.prob[c][k][0], p, 0.03);
            }
        }
        assert!(fit.bic(data.total()) > 0.0);
    }

    // -- monotonicity ---------------------------------------------------------

    fn random_row(raw: &[f64]) -> Vec<f64> {
        let s: f64 = raw.iter().sum();
        raw.iter().map(|x| x / s).collect()
    }

    /// Random data (up to 4 attributes of 2–4 levels, some missing, counts up to
    /// 1000) and a random start.
    fn problem() -> impl Strategy<Value = (PatternCounts, Params)> {
        prop::collection::vec(2usize..=4, 1..=4).prop_flat_map(|levels| {
            let k = levels.len();
            let lv = levels.clone();
            let rows = prop::collection::vec(
                (
                    levels
                        .iter()
                        .map(|&l| prop_oneof![5 => 0..l as u8, 1 => Just(MISSING_LEVEL)])
                        .collect::<Vec<_>>(),
                    1u64..1000,
                ),
                1..40,
            );
            let raw = |l: usize| prop::collection::vec(0.01f64..1.0, l);
            let m = lv.iter().map(|&l| raw(l)).collect::<Vec<_>>();
            let u = lv.iter().map(|&l| raw(l)).collect::<Vec<_>>();
            (rows, m, u, 0.01f64..0.99).prop_map(move |(rows, m, u, lambda)| {
                let mut data = PatternCounts::new(levels.clone());
                for (v, n) in rows {
                    data.add(&v, n).unwrap();
                }
                let params = Params {
                    lambda,
                    m: m.iter().map(|r| random_row(r)).collect(),
                    u: u.iter().map(|r| random_row(r)).collect(),
                };
                debug_assert_eq!(params.m.len(), k);
                (data, params)
            })
        })
    }

    fn assert_monotone(trace: &[f64]) -> std::result::Result<(), TestCaseError> {
        for w in trace.windows(2) {
            // 1e-12 relative slack for rounding (docs/methods.md §2).
            let slack = 1e-12 * w[0].abs().max(1.0);
            prop_assert!(w[1] >= w[0] - slack, "objective fell: {} -> {}", w[0], w[1]);
        }
        Ok(())
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(64))]

        /// The log-likelihood never decreases (Dempster, Laird & Rubin 1977),
        /// also with the probability floor binding and with u fixed.
        #[test]
        fn loglik_never_decreases(
            (data, init) in problem(),
            floor in prop_oneof![Just(1e-9), Just(1e-3), Just(0.05)],
            fix_u in any::<bool>(),
        ) {
            let opts = EmOptions {
                max_iterations: 150,
                rel_tol_loglik: 0.0,
                param_tol: 0.0,
                floor,
                fix_u,
                ..EmOptions::default()
            };
            let fit = fit(&data, &init, &opts).unwrap();
            assert_monotone(&fit.loglik_trace)?;
            prop_assert!(fit.params.lambda > 0.0 && fit.params.lambda < 1.0);
            for row in fit.params.m.iter().chain(&fit.params.u) {
                prop_assert!((row.iter().sum::<f64>() - 1.0).abs() < 1e-9);
                prop_assert!(row.iter().all(|&p| p >= floor * (1.0 - 1e-12)));
            }
            // Without smoothing the trace is the plain log-likelihood.
            let direct = loglik(&data, &fit.params, None);
            prop_assert!((direct - fit.loglik).abs() <= 1e-9 * direct.abs().max(1.0));
        }

        /// With smoothing the penalised log-likelihood never decreases.
        #[test]
        fn penalised_loglik_never_decreases(
            (data, init) in problem(),
            smoothing in 0.01f64..3.0,
        ) {
            let opts = EmOptions {
                max_iterations: 150,
                rel_tol_loglik: 0.0,
                param_tol: 0.0,
                smoothing,
                ..EmOptions::default()
            };
            let fit = fit(&data, &init, &opts).unwrap();
            assert_monotone(&fit.loglik_trace)?;
        }

        /// Under the level order the penalised log-likelihood never decreases either,
        /// and every fitted row keeps the order.
        #[test]
        fn ordered_fit_never_decreases_and_keeps_the_order(
            (data, init) in problem(),
            smoothing in 0.05f64..2.0,
        ) {
            let opts = EmOptions {
                max_iterations: 100,
                rel_tol_loglik: 0.0,
                param_tol: 0.0,
                smoothing,
                ordered: true,
                ..EmOptions::default()
            };
            let fit = fit(&data, &init, &opts).unwrap();
            assert_monotone(&fit.loglik_trace)?;
            for w in fit.params.weights() {
                for pair in w.windows(2) {
                    prop_assert!(pair[0] >= pair[1] - 1e-9, "weights out of order: {w:?}");
                }
            }
        }

        /// [`ordered_rows`] returns probability rows in the level order, equal to the
        /// plain shares when those are already ordered, and no other ordered rows (here:
        /// the ordered rows of perturbed counts) reach a higher objective.
        #[test]
        fn ordered_rows_are_the_constrained_maximum(
            ab in prop::collection::vec((0.01f64..50.0, 0.01f64..50.0), 2..6),
            noise in prop::collection::vec((0.2f64..5.0, 0.2f64..5.0), 6),
        ) {
            let a: Vec<f64> = ab.iter().map(|x| x.0).collect();
            let b: Vec<f64> = ab.iter().map(|x| x.1).collect();
            let (m, u) = ordered_rows(&a, &b);
            prop_assert!((m.iter().sum::<f64>() - 1.0).abs() < 1e-9);
            prop_assert!((u.iter().sum::<f64>() - 1.0).abs() < 1e-9);
            for l in 1..m.len() {
                prop_assert!(m[l - 1] * u[l] >= m[l] * u[l - 1] * (1.0 - 1e-9));
            }
            let objective = |m: &[f64], u: &[f64]| -> f64 {
                (0..a.len()).map(|l| a[l] * m[l].ln() + b[l] * u[l].ln()).sum()
            };
            let best = objective(&m, &u);
            let (sa, sb): (f64, f64) = (a.iter().sum(), b.iter().sum());
            let plain_ordered = (1..a.len()).all(|l| a[l - 1] * b[l] >= a[l] * b[l - 1]);
            if plain_ordered {
                for l in 0..a.len() {
                    prop_assert!((m[l] - a[l] / sa).abs() < 1e-9 && (u[l] - b[l] / sb).abs() < 1e-9);
                }
            }
            let a2: Vec<f64> = a.iter().zip(&noise).map(|(x, n)| x * n.0).collect();
            let b2: Vec<f64> = b.iter().zip(&noise).map(|(x, n)| x * n.1).collect();
            let (m2, u2) = ordered_rows(&a2, &b2);
            prop_assert!(objective(&m2, &u2) <= best + 1e-9 * best.abs().max(1.0));
        }

        /// The latent class fit never decreases its penalised log-likelihood, for any
        /// number of classes.
        #[test]
        fn latent_class_fit_never_decreases(
            (data, _init) in problem(),
            classes in 2usize..5,
            seed in 0u64..1000,
        ) {
            let opts = ClassOptions {
                classes,
                starts: 2,
                seed,
                max_iterations: 60,
                rel_tol_loglik: 0.0,
                smoothing: 0.5,
            };
            let fit = fit_classes(&data, &opts).unwrap();
            assert_monotone(&fit.loglik_trace)?;
            prop_assert!((fit.params.share.iter().sum::<f64>() - 1.0).abs() < 1e-9);
            for p in fit.params.posteriors(&data.iter().next().unwrap().0) {
                prop_assert!((0.0..=1.0).contains(&p));
            }
        }

        /// Posteriors are probabilities and agree with the weight form.
        #[test]
        fn posterior_is_a_probability((data, init) in problem()) {
            for (codes, _) in data.iter() {
                let p = posterior(&init, &codes);
                prop_assert!((0.0..=1.0).contains(&p));
                let w = evidence_bits(&init, &codes);
                let odds = init.lambda / (1.0 - init.lambda) * w.exp2();
                prop_assert!((p - odds / (1.0 + odds)).abs() < 1e-9);
            }
        }
    }
}
