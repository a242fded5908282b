//! Score: a candidate pair in, its per-attribute bits, evidence, prior, probability and
//! decision out.
//!
//! [`PairScorer`] joins the fitted model's weights ([`crate::model::Scorer`]) and the
//! thresholds of `[decide]` ([`Decider`]) so that every command scores a pair with one
//! call. Every number is rounded to [`BITS_DECIMALS`] decimals of a bit *before* it is
//! added up, so the evidence is exactly the sum of the bits the outputs show, and the
//! probability and decision follow from the prior and evidence shown.
//!
//! [`score_all`] scores every candidate pair of a [`Prepared`] run in parallel and hands
//! each [`ScoredPair`] to a [`PairSink`]; the output files implement the sink
//! (`crate::output`), so this module never writes a file. Chunks of block tasks are
//! scored in parallel and given to the sink in task order, so what the sink sees does
//! not depend on the number of threads.

use rayon::prelude::*;

use crate::compare::{Gamma, MAX_ATTRS};
use crate::decide::{round_bits, Decider, Estimate, Scored, WeightHistogram};
pub use crate::decide::{PairSink, ScoredPair};
use crate::error::{Error, Result};
use crate::model::{KeyCounts, Scorer};
use crate::prepare::Prepared;
use crate::util::Progress;

mod explain;
pub use explain::{explain, ExplainedAttr, ExplainedRecord, Explanation};

#[cfg(doc)]
use crate::decide::BITS_DECIMALS;

/// Scores pairs: model weights plus decision thresholds.
#[derive(Debug, Clone)]
pub struct PairScorer<'a> {
    scorer: Scorer<'a>,
    decider: Decider,
    attrs: usize,
}

impl<'a> PairScorer<'a> {
    /// Score with `scorer`'s weights over `attrs` compared attributes and decide with
    /// `decider`.
    pub fn new(scorer: Scorer<'a>, decider: Decider, attrs: usize) -> PairScorer<'a> {
        PairScorer {
            scorer,
            decider,
            attrs,
        }
    }

    /// The decision thresholds.
    pub fn decider(&self) -> &Decider {
        &self.decider
    }

    /// Replace the decision thresholds (e.g. with one chosen by `--target-precision`).
    pub fn set_decider(&mut self, decider: Decider) {
        self.decider = decider;
    }

    /// The model's weights.
    pub fn model_scorer(&self) -> &Scorer<'a> {
        &self.scorer
    }

    /// Bits added by attribute `k` at level `code` for a pair of blocking key `key`
    /// (`None`: scored with the combined model) whose first record is `a`, rounded.
    #[inline]
    pub fn bits(&self, key: Option<usize>, k: usize, code: u8, a: u32) -> f64 {
        round_bits(self.scorer.contribution(key, k, code, a))
    }

    /// The prior (log2 prior odds) for pairs of blocking key `key`, rounded.
    #[inline]
    pub fn prior(&self, key: Option<usize>) -> f64 {
        round_bits(self.scorer.prior(key))
    }

    /// Score a pair of blocking key `key` with comparison vector `gamma` and first
    /// record `a`.
    #[inline]
    pub fn score(&self, key: Option<usize>, gamma: &Gamma, a: u32) -> Scored {
        let evidence: f64 = (0..self.attrs)
            .map(|k| self.bits(key, k, gamma[k], a))
            .sum();
        self.finish(key, evidence)
    }

    /// Score records `a` and `b` with comparison vector `gamma`: everything the output
    /// files show about the pair.
    #[inline]
    pub fn score_pair(&self, key: Option<usize>, a: u32, b: u32, gamma: Gamma) -> ScoredPair {
        let mut bits = [0.0; MAX_ATTRS];
        let mut evidence = 0.0;
        for (k, x) in bits.iter_mut().enumerate().take(self.attrs) {
            *x = self.bits(key, k, gamma[k], a);
            evidence += *x;
        }
        ScoredPair {
            a,
            b,
            key,
            gamma,
            bits,
            scored: self.finish(key, evidence),
        }
    }

    fn finish(&self, key: Option<usize>, evidence: f64) -> Scored {
        // Summing rounded values can leave float noise in the last place; round again so
        // that the number kept is the number written.
        let evidence = round_bits(evidence);
        let prior = self.prior(key);
        let odds = self.decider.score(evidence, prior);
        Scored {
            evidence,
            prior,
            probability: Decider::probability(evidence, prior),
            decision: self.decider.decide(odds),
        }
    }
}

/// What scoring all candidate pairs counted.
#[derive(Debug, Clone)]
pub struct ScoreStats {
    /// Pairs by posterior log2 odds with their probabilities (for the model's own
    /// precision and recall estimates).
    pub histogram: WeightHistogram,
    /// Candidate pairs compared per blocking key.
    pub per_key: Vec<u64>,
    /// Pairs per decision, indexed by `Decision as usize`.
    pub decisions: [u64; 3],
}

impl ScoreStats {
    fn new(keys: usize) -> ScoreStats {
        ScoreStats {
            histogram: WeightHistogram::default(),
            per_key: vec![0; keys],
            decisions: [0; 3],
        }
    }

    fn merge(&mut self, other: &ScoreStats) {
        self.histogram.merge(&other.histogram);
        for (t, p) in self.per_key.iter_mut().zip(&other.per_key) {
            *t += p;
        }
        for (t, d) in self.decisions.iter_mut().zip(other.decisions) {
            *t += d;
        }
    }

    /// The model's estimate of precision and recall at the match threshold of `decider`.
    pub fn estimate(&self, decider: &Decider) -> Estimate {
        self.histogram.estimate(decider.upper)
    }
}

/// Score every candidate pair of `prepared`'s tasks, hand the pairs to `sink` in task
/// order, and count them. `progress` counts pairs enumerated.
pub fn score_all<S: PairSink + Sync>(
    prepared: &Prepared,
    scorer: &PairScorer<'_>,
    sink: &mut S,
    progress: &Progress,
) -> Result<ScoreStats> {
    let (table, blocking, comparison) = (&prepared.table, &prepared.blocking, &prepared.comparison);
    let keys = blocking.keys.len();
    let mut total = ScoreStats::new(keys);
    let all_chunks = crate::util::chunks(&prepared.tasks);
    // Waves bound the memory held by chunks waiting to be handed over in order.
    let wave = rayon::current_num_threads().max(1) * 4;
    for group in all_chunks.chunks(wave) {
        let parts: Vec<(ScoreStats, S::Chunk)> = {
            let sink = &*sink;
            group
                .par_iter()
                .map(|chunk| {
                    let mut stats = ScoreStats::new(keys);
                    let mut buf = S::Chunk::default();
                    let mut scratch = comparison.scratch();
                    for task in chunk.iter() {
                        blocking.for_each_pair(task, |a, b| {
                            stats.per_key[task.key] += 1;
                            let g = comparison.gamma(table, a, b, &mut scratch);
                            let p = scorer.score_pair(Some(task.key), a, b, g);
                            let s = &p.scored;
                            stats.histogram.add(s.log2_odds(), s.probability, 1);
                            stats.decisions[s.decision as usize] += 1;
                            sink.add(&mut buf, &p);
                        });
                        progress.inc(prepared.task_pairs(task));
                    }
                    (stats, buf)
                })
                .collect()
        };
        for (stats, buf) in parts {
            total.merge(&stats);
            sink.flush(buf)?;
        }
    }
    Ok(total)
}

/// `decider` with its match threshold moved to where the model's estimated precision
/// reaches `target`, estimated from the comparison vector counts of pass 1
/// (value-frequency adjustments left out). The review threshold is lowered to the match
/// threshold if it was above it.
pub fn threshold_for_target(
    decider: &Decider,
    scorer: &Scorer<'_>,
    counts: &[KeyCounts],
    target: f64,
) -> Result<Decider> {
    let mut h = WeightHistogram::default();
    for (k, key) in counts.iter().enumerate() {
        let prior = scorer.prior(Some(k));
        for (codes, n) in key.counts.iter() {
            let mut g = [crate::compare::MISSING_LEVEL; MAX_ATTRS];
            g[..codes.len()].copy_from_slice(&codes);
            // No record index: frequency adjustments need one, so use the plain weights.
            let w: f64 = (0..codes.len())
                .map(|a| scorer.contribution_plain(Some(k), a, g[a]))
                .sum();
            h.add(decider.score(w, prior), Decider::probability(w, prior), n);
        }
    }
    let Some(upper) = h.threshold_for_precision(target) else {
        let best = h.estimate(f64::INFINITY);
        return Err(Error::Usage(format!(
            "no match threshold reaches an estimated precision of {target}; the strictest \
             threshold gives {:.4}. Lower --target-precision",
            best.precision
        )));
    };
    if upper < decider.lower {
        let show = |s: f64| format!("probability {:.6}", Decider::probability(s, 0.0));
        return Err(Error::Usage(format!(
            "--target-precision {target} puts the match threshold ({}) below the review \
             threshold ({}) of [decide], so no pair would go to review; set `review_at` \
             in the spec below {}, or leave out --target-precision",
            show(upper),
            show(decider.lower),
            show(upper)
        )));
    }
    Ok(Decider {
        upper,
        lower: decider.lower,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::compare::{Comparator, Comparison, MAX_ATTRS, MISSING_LEVEL};
    use crate::compare::{CompareSpec, Level};
    use crate::decide::Decision;
    use crate::model::{AttrModel, Model, MODEL_VERSION};
    use crate::record::{Attr, RecordTable, RecordTableBuilder, StdRecord};
    use crate::spec::DecideSpec;

    /// Two attributes, m and u invented so that the bits are easy to check by hand.
    fn model() -> Model {
        let attr = |name: &str, m: [f64; 2], u: [f64; 2]| AttrModel {
            attribute: name.into(),
            levels: vec!["exact".into(), "disagree".into()],
            m: m.to_vec(),
            u: u.to_vec(),
            weight: m.iter().zip(&u).map(|(m, u)| (m / u).log2()).collect(),
            frequency: false,
        };
        Model {
            format: "samekey-model".into(),
            version: MODEL_VERSION,
            spec_fingerprint: String::new(),
            spec_layout: String::new(),
            // log2(λ/(1-λ)) = log2(1/1023) ≈ -9.9986 bits.
            lambda: 1.0 / 1024.0,
            records: 0,
            candidate_pairs: 0,
            expected_matches: 0.0,
            attribute: vec![
                // exact: log2(0.9/0.01) = 6.4919 bits; disagree: log2(0.1/0.99) = -3.3074.
                attr("family_name", [0.9, 0.1], [0.01, 0.99]),
                // exact: log2(0.8/0.001) = 9.6439 bits; disagree: log2(0.2/0.999) = -2.3205.
                attr("email", [0.8, 0.2], [0.001, 0.999]),
            ],
            keys: Vec::new(),
            fit: Default::default(),
            warnings: Vec::new(),
        }
    }

    fn table() -> RecordTable {
        let mut b = RecordTableBuilder::new(vec!["s".into()]);
        for (i, (n, e)) in [("lind", "a@x.org"), ("lind", "a@x.org"), ("berg", "")]
            .iter()
            .enumerate()
        {
            let mut r = StdRecord::default();
            r.set(Attr::FamilyName, Some(n.to_string()));
            if !e.is_empty() {
                r.set(Attr::Email, Some(e.to_string()));
            }
            b.push(0, i.to_string(), r);
        }
        b.finish()
    }

    fn comparison(table: &RecordTable) -> Comparison {
        let spec = |attr| CompareSpec {
            attr,
            levels: vec![Level::Exact],
            frequency: false,
        };
        Comparison {
            comparators: vec![
                Comparator::new(&spec(Attr::FamilyName), table.column(Attr::FamilyName)),
                Comparator::new(&spec(Attr::Email), table.column(Attr::Email)),
            ],
        }
    }

    #[test]
    fn one_call_gives_bits_evidence_prior_probability_and_decision() {
        let (table, model) = (table(), model());
        let comparison = comparison(&table);
        let scorer = PairScorer::new(
            Scorer::new(&model, &comparison, &table, &[]),
            Decider::new(DecideSpec {
                match_at: 0.9,
                review_at: 0.5,
            }),
            2,
        );
        let mut g = [MISSING_LEVEL; MAX_ATTRS];
        // Both agree exactly: 6.4919 + 9.6439 = 16.1358 bits.
        g[0] = 0;
        g[1] = 0;
        let s = scorer.score(None, &g, 0);
        assert_eq!(scorer.bits(None, 0, 0, 0), 6.4919);
        assert_eq!(scorer.bits(None, 1, 0, 0), 9.6439);
        assert_eq!(format!("{:.4}", s.evidence), "16.1358");
        assert_eq!(format!("{:.4}", s.prior), "-9.9986");
        let p = 1.0 / (1.0 + (-(s.prior + s.evidence)).exp2());
        assert_eq!(s.probability, p);
        assert!(p > 0.98 && p < 0.99, "{p}");
        assert_eq!(s.decision, Decision::Match);
        // Family name agrees, e-mail missing: 6.4919 bits, probability about 0.022.
        g[1] = MISSING_LEVEL;
        let s = scorer.score(None, &g, 0);
        assert_eq!(s.evidence, 6.4919);
        assert_eq!(scorer.bits(None, 1, MISSING_LEVEL, 0), 0.0);
        assert_eq!(s.decision, Decision::NonMatch);
        // Family name disagrees, e-mail agrees: 6.3365 bits, probability about 0.07:
        // non_match at the default thresholds, review with review_at = 0.01.
        g[0] = 1;
        g[1] = 0;
        let s = scorer.score(None, &g, 0);
        assert_eq!(format!("{:.4}", s.evidence), "6.3365");
        assert_eq!(s.decision, Decision::NonMatch);
        let lenient = Decider::new(DecideSpec {
            match_at: 0.99,
            review_at: 0.01,
        });
        let mut scorer = scorer;
        scorer.set_decider(lenient);
        assert_eq!(scorer.score(None, &g, 0).decision, Decision::Review);
        assert_eq!(scorer.decider(), &lenient);
    }

    #[test]
    fn the_evidence_is_the_sum_of_the_bits_shown() {
        let (table, model) = (table(), model());
        let comparison = comparison(&table);
        let scorer = PairScorer::new(
            Scorer::new(&model, &comparison, &table, &[]),
            Decider::new(DecideSpec::default()),
            2,
        );
        for a in [0u8, 1, MISSING_LEVEL] {
            for b in [0u8, 1, MISSING_LEVEL] {
                let mut g = [MISSING_LEVEL; MAX_ATTRS];
                g[0] = a;
                g[1] = b;
                let s = scorer.score(None, &g, 0);
                let shown = |x: f64| format!("{x:.4}").parse::<f64>().unwrap();
                let sum = shown(scorer.bits(None, 0, a, 0)) + shown(scorer.bits(None, 1, b, 0));
                assert_eq!(format!("{:.4}", s.evidence), format!("{sum:.4}"));
            }
        }
    }
}
