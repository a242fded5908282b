//! Decide: a pair's evidence in, its probability and decision out.
//!
//! A pair's *evidence* is the log2 likelihood ratio `Σ log2(m/u)` over the compared
//! attributes, in bits (a missing value adds nothing). The model that scored the pair
//! gives a *prior*, the log2 prior odds `log2(λ / (1 − λ))`. Their sum is the pair's
//! posterior log2 odds, and its *probability* is `1 / (1 + 2^-(prior + evidence))`. The
//! spec's `[decide]` section states the two thresholds once, as probabilities
//! (`match_at`, `review_at`); they are compared in log2 odds.
//!
//! [`Scored`] is what one call of [`crate::score::PairScorer::score`] returns: the
//! evidence, prior, probability and decision of one pair, all derived from the same
//! rounded per-attribute bits that the output files show.

use crate::compare::{Gamma, MAX_ATTRS};
use crate::error::Result;
use crate::spec::DecideSpec;

/// What happens to a pair.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Decision {
    /// At or above `match_at`: the records are linked.
    Match,
    /// At or above `review_at` and below `match_at`: a person should look.
    Review,
    /// Below `review_at`.
    NonMatch,
}

impl Decision {
    /// Every decision, in index order (`Decision as usize`).
    pub const ALL: [Decision; 3] = [Decision::Match, Decision::Review, Decision::NonMatch];

    /// The name written to output files and summaries: `match`, `review`, `non_match`.
    pub fn name(self) -> &'static str {
        match self {
            Decision::Match => "match",
            Decision::Review => "review",
            Decision::NonMatch => "non_match",
        }
    }
}

/// The decision thresholds, as posterior log2 odds.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Decider {
    /// log2 odds at or above which a pair is a match.
    pub upper: f64,
    /// log2 odds at or above which (and below `upper`) a pair goes to review.
    pub lower: f64,
}

impl Decider {
    /// Build from the spec's `[decide]` section.
    pub fn new(spec: DecideSpec) -> Decider {
        Decider {
            upper: log2_odds(spec.match_at),
            lower: log2_odds(spec.review_at),
        }
    }

    /// The score the thresholds are compared with: posterior log2 odds of a pair with
    /// evidence `evidence` under prior log2 odds `prior`.
    #[inline]
    pub fn score(&self, evidence: f64, prior: f64) -> f64 {
        evidence + prior
    }

    /// Probability of a pair with evidence `evidence` under prior log2 odds `prior`.
    #[inline]
    pub fn probability(evidence: f64, prior: f64) -> f64 {
        probability_of(evidence + prior)
    }

    /// Decision for a score (posterior log2 odds).
    #[inline]
    pub fn decide(&self, score: f64) -> Decision {
        if score >= self.upper {
            Decision::Match
        } else if score >= self.lower {
            Decision::Review
        } else {
            Decision::NonMatch
        }
    }

    /// The match threshold as a probability.
    pub fn match_at(&self) -> f64 {
        probability_of(self.upper)
    }

    /// The review threshold as a probability.
    pub fn review_at(&self) -> f64 {
        probability_of(self.lower)
    }

    /// The thresholds in words.
    pub fn describe(&self) -> String {
        format!(
            "match at probability >= {:.4}, review at probability >= {:.4}",
            self.match_at(),
            self.review_at()
        )
    }
}

/// The probability of posterior log2 odds `x`.
#[inline]
pub fn probability_of(x: f64) -> f64 {
    1.0 / (1.0 + (-x).exp2())
}

/// log2 prior odds of a match prior `lambda`.
pub fn prior_log2_odds(lambda: f64) -> f64 {
    let l = lambda.clamp(1e-300, 1.0 - 1e-12);
    (l / (1.0 - l)).log2()
}

fn log2_odds(p: f64) -> f64 {
    (p / (1.0 - p)).log2()
}

/// One scored pair: the numbers the output files show and the decision made from them.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scored {
    /// Sum of the per-attribute bits (each rounded to [`BITS_DECIMALS`] decimals).
    pub evidence: f64,
    /// log2 prior odds of the model that scored the pair (rounded likewise).
    pub prior: f64,
    /// `1 / (1 + 2^-(prior + evidence))`.
    pub probability: f64,
    /// The decision at the thresholds.
    pub decision: Decision,
}

impl Scored {
    /// Posterior log2 odds, `prior + evidence`: what the thresholds are compared with.
    pub fn log2_odds(&self) -> f64 {
        self.prior + self.evidence
    }
}

/// One scored candidate pair, as the sinks see it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScoredPair {
    /// First record (table index).
    pub a: u32,
    /// Second record.
    pub b: u32,
    /// The blocking key that produced the pair (`None`: scored with the combined model).
    pub key: Option<usize>,
    /// Level code per compared attribute.
    pub gamma: Gamma,
    /// Bits per compared attribute (rounded; the first `attrs` entries are used).
    pub bits: [f64; MAX_ATTRS],
    /// Evidence, prior, probability and decision.
    pub scored: Scored,
}

impl ScoredPair {
    /// The decision.
    pub fn decision(&self) -> Decision {
        self.scored.decision
    }
}

/// Where scored pairs go. Chunks of pairs are collected in parallel into
/// [`PairSink::Chunk`]s, then handed to the sink one by one in task order.
pub trait PairSink {
    /// Per-chunk buffer, filled on a worker thread.
    type Chunk: Send + Default;
    /// Take one scored pair into a chunk (on a worker thread).
    fn add(&self, chunk: &mut Self::Chunk, pair: &ScoredPair);
    /// Take a finished chunk (called in task order).
    fn flush(&mut self, chunk: Self::Chunk) -> Result<()>;
}

/// Two sinks side by side: every pair goes to both.
impl<A: PairSink + Sync, B: PairSink + Sync> PairSink for (A, B) {
    type Chunk = (A::Chunk, B::Chunk);
    fn add(&self, chunk: &mut Self::Chunk, pair: &ScoredPair) {
        self.0.add(&mut chunk.0, pair);
        self.1.add(&mut chunk.1, pair);
    }
    fn flush(&mut self, chunk: Self::Chunk) -> Result<()> {
        self.0.flush(chunk.0)?;
        self.1.flush(chunk.1)
    }
}

/// Decimals of every bit value the outputs show; scoring rounds to the same, so that
/// the evidence shown is exactly the sum of the bits shown.
pub const BITS_DECIMALS: usize = 4;

/// Round a number of bits to [`BITS_DECIMALS`] decimals.
#[inline]
pub fn round_bits(x: f64) -> f64 {
    // Adding 0.0 turns -0.0 into 0.0, so that no file shows "-0.0000".
    (x * 1e4).round() / 1e4 + 0.0
}

/// Bins per bit of weight in a [`WeightHistogram`].
const BINS_PER_BIT: f64 = 32.0;
/// Lowest and highest weight the histogram separates (weights outside are clamped).
const WEIGHT_RANGE: f64 = 128.0;

/// Candidate pairs by match weight, with the sum of their match probabilities: enough
/// to estimate precision and recall at any threshold without labels.
///
/// The model's own estimate (after Belin & Rubin 1995, docs/methods.md §4): among pairs at or
/// above a threshold, the expected share of true matches is the mean match probability,
/// and the expected matches found are the sum of those probabilities out of the sum over
/// all candidate pairs. Matches that blocking never proposed are outside this estimate.
#[derive(Debug, Clone, PartialEq)]
pub struct WeightHistogram {
    counts: Vec<u64>,
    prob: Vec<f64>,
}

impl Default for WeightHistogram {
    fn default() -> Self {
        let n = (2.0 * WEIGHT_RANGE * BINS_PER_BIT) as usize + 1;
        WeightHistogram {
            counts: vec![0; n],
            prob: vec![0.0; n],
        }
    }
}

impl WeightHistogram {
    fn bin(w: f64) -> usize {
        let x = (w.clamp(-WEIGHT_RANGE, WEIGHT_RANGE) + WEIGHT_RANGE) * BINS_PER_BIT;
        x.floor() as usize
    }

    /// Lowest weight of bin `i`.
    fn bin_start(i: usize) -> f64 {
        i as f64 / BINS_PER_BIT - WEIGHT_RANGE
    }

    /// Add `count` pairs of weight `w` and match probability `p`.
    #[inline]
    pub fn add(&mut self, w: f64, p: f64, count: u64) {
        let b = Self::bin(w);
        self.counts[b] += count;
        self.prob[b] += p * count as f64;
    }

    /// Add another histogram.
    pub fn merge(&mut self, other: &WeightHistogram) {
        for (a, b) in self.counts.iter_mut().zip(&other.counts) {
            *a += b;
        }
        for (a, b) in self.prob.iter_mut().zip(&other.prob) {
            *a += b;
        }
    }

    /// Pairs counted.
    pub fn total(&self) -> u64 {
        self.counts.iter().sum()
    }

    /// Expected true matches among all pairs counted.
    pub fn expected_matches(&self) -> f64 {
        self.prob.iter().sum()
    }

    /// Estimated (precision, recall) of deciding "match" at weight ≥ `t` (bin resolution).
    pub fn estimate(&self, t: f64) -> Estimate {
        let from = Self::bin(t);
        let n: u64 = self.counts[from..].iter().sum();
        let p: f64 = self.prob[from..].iter().sum();
        let all = self.expected_matches();
        Estimate {
            pairs: n,
            precision: if n == 0 { 1.0 } else { p / n as f64 },
            recall: if all <= 0.0 { 1.0 } else { p / all },
        }
    }

    /// The lowest weight threshold whose estimated precision is at least `target`.
    pub fn threshold_for_precision(&self, target: f64) -> Option<f64> {
        let mut n = 0u64;
        let mut p = 0.0;
        let mut best = None;
        for i in (0..self.counts.len()).rev() {
            n += self.counts[i];
            p += self.prob[i];
            if n > 0 && p / n as f64 >= target {
                best = Some(Self::bin_start(i));
            }
        }
        best
    }
}

/// A model-based estimate at one threshold.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Estimate {
    /// Pairs at or above the threshold.
    pub pairs: u64,
    /// Expected share of true matches among them.
    pub precision: f64,
    /// Expected share of the candidates' true matches that they hold.
    pub recall: f64,
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn probability_thresholds_are_log_odds() {
        // λ = 1/1025: prior odds 1:1024, log2 = -10.
        let prior = prior_log2_odds(1.0 / 1025.0);
        assert!((prior + 10.0).abs() < 1e-9);
        let c = Decider::new(DecideSpec {
            match_at: 0.8,
            review_at: 0.5,
        });
        assert!((c.lower - 0.0).abs() < 1e-12);
        assert!((c.upper - 2.0).abs() < 1e-12); // log2(0.8/0.2) = 2
        assert!((Decider::probability(10.0, prior) - 0.5).abs() < 1e-12);
        assert_eq!(c.decide(c.score(12.01, prior)), Decision::Match);
        assert_eq!(c.decide(c.score(11.0, prior)), Decision::Review);
        assert_eq!(c.decide(c.score(9.99, prior)), Decision::NonMatch);
        assert!((c.match_at() - 0.8).abs() < 1e-12);
        assert!((c.review_at() - 0.5).abs() < 1e-12);
        assert_eq!(
            c.describe(),
            "match at probability >= 0.8000, review at probability >= 0.5000"
        );
    }

    #[test]
    fn decision_names_are_the_file_vocabulary() {
        let names: Vec<&str> = Decision::ALL.iter().map(|d| d.name()).collect();
        assert_eq!(names, ["match", "review", "non_match"]);
        for (i, d) in Decision::ALL.iter().enumerate() {
            assert_eq!(*d as usize, i);
        }
    }

    #[test]
    fn bits_round_to_four_decimals() {
        assert_eq!(round_bits(1.23456), 1.2346);
        assert_eq!(format!("{:.4}", round_bits(-0.00004)), "0.0000");
        assert_eq!(format!("{:.4}", round_bits(-7.00005)), "-7.0001");
    }

    #[test]
    fn estimates_from_the_histogram() {
        let mut h = WeightHistogram::default();
        // 10 pairs at weight 20 with p = 0.99, 10 at weight 0 with p = 0.5, 80 at -20, p = 0.
        h.add(20.0, 0.99, 10);
        h.add(0.0, 0.5, 10);
        h.add(-20.0, 0.0, 80);
        let e = h.estimate(10.0);
        assert_eq!(e.pairs, 10);
        assert!((e.precision - 0.99).abs() < 1e-12);
        assert!((e.recall - 9.9 / 14.9).abs() < 1e-12);
        let e = h.estimate(-1.0);
        assert!((e.precision - 14.9 / 20.0).abs() < 1e-12);
        // Precision 0.9 needs the threshold above weight 0.
        let t = h.threshold_for_precision(0.9).unwrap();
        assert!(t > 0.0 && t <= 20.0, "{t}");
        assert_eq!(h.threshold_for_precision(0.999), None);
    }

    proptest! {
        #[test]
        fn probability_is_monotone_and_agrees_with_decision(
            lambda in 1e-9f64..0.5, w1 in -40.0f64..40.0, w2 in -40.0f64..40.0
        ) {
            let c = Decider::new(DecideSpec { match_at: 0.9, review_at: 0.4 });
            let prior = prior_log2_odds(lambda);
            let (lo, hi) = if w1 <= w2 { (w1, w2) } else { (w2, w1) };
            prop_assert!(Decider::probability(lo, prior) <= Decider::probability(hi, prior));
            let p = Decider::probability(hi, prior);
            match c.decide(c.score(hi, prior)) {
                Decision::Match => prop_assert!(p >= 0.9 - 1e-9),
                Decision::Review => prop_assert!((0.4 - 1e-9..0.9 + 1e-9).contains(&p)),
                Decision::NonMatch => prop_assert!(p < 0.4 + 1e-9),
            }
        }
    }
}
