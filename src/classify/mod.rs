//! Classify: a pair's match weight in, its match probability and decision out.
//!
//! The match weight is the log2 likelihood ratio `Σ log2(m/u)` over the compared
//! attributes (missing values add nothing). With the match prior λ of the model that
//! scored the pair the match probability is `1 / (1 + 2^-(W + log2(λ / (1 − λ))))`.
//! Thresholds are given as probabilities (compared in log2 odds) or as weights.

use crate::spec::Thresholds;

/// What happens to a pair.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Decision {
    /// At or above the upper threshold: the records are linked.
    Match,
    /// Between the thresholds: a person should look.
    Review,
    /// Below the lower threshold.
    NonMatch,
}

impl Decision {
    /// The name written to output files.
    pub fn name(self) -> &'static str {
        match self {
            Decision::Match => "match",
            Decision::Review => "review",
            Decision::NonMatch => "non_match",
        }
    }
}

/// Turns weights into probabilities and decisions.
///
/// A pair's *score* is what the thresholds are compared with: its posterior log2 odds
/// `W + log2(λ / (1 − λ))` when thresholds are probabilities, or its match weight `W`
/// when thresholds are weights. The prior `λ` comes with the model that scored the pair.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Classifier {
    /// Score at or above which a pair is a match.
    pub upper: f64,
    /// Score at or above which (and below `upper`) a pair goes to review.
    pub lower: f64,
    /// True when scores are match weights, false when they are posterior log2 odds.
    pub by_weight: bool,
}

impl Classifier {
    /// Build from the spec's thresholds.
    pub fn new(thresholds: Thresholds) -> Classifier {
        match thresholds {
            Thresholds::Weight { upper, lower } => Classifier {
                upper,
                lower,
                by_weight: true,
            },
            Thresholds::Probability { upper, lower } => Classifier {
                upper: log2_odds(upper),
                lower: log2_odds(lower),
                by_weight: false,
            },
        }
    }

    /// The score of a pair with weight `w` under prior log2 odds `prior`.
    #[inline]
    pub fn score(&self, w: f64, prior: f64) -> f64 {
        if self.by_weight {
            w
        } else {
            w + prior
        }
    }

    /// Match probability of a pair with weight `w` under prior log2 odds `prior`.
    #[inline]
    pub fn probability(w: f64, prior: f64) -> f64 {
        1.0 / (1.0 + (-(w + prior)).exp2())
    }

    /// Decision for a score.
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

    /// The thresholds in words.
    pub fn describe(&self) -> String {
        if self.by_weight {
            format!(
                "match at weight >= {:.2}, review at weight >= {:.2}",
                self.upper, self.lower
            )
        } else {
            let p = |x: f64| 1.0 / (1.0 + (-x).exp2());
            format!(
                "match at probability >= {:.4}, review at probability >= {:.4}",
                p(self.upper),
                p(self.lower)
            )
        }
    }
}

/// log2 prior odds of a match prior `lambda`.
pub fn prior_log2_odds(lambda: f64) -> f64 {
    let l = lambda.clamp(1e-300, 1.0 - 1e-12);
    (l / (1.0 - l)).log2()
}

fn log2_odds(p: f64) -> f64 {
    (p / (1.0 - p)).log2()
}

/// Bins per bit of weight in a [`WeightHistogram`].
const BINS_PER_BIT: f64 = 32.0;
/// Lowest and highest weight the histogram separates (weights outside are clamped).
const WEIGHT_RANGE: f64 = 128.0;

/// Candidate pairs by match weight, with the sum of their match probabilities: enough
/// to estimate precision and recall at any threshold without labels.
///
/// The model's own estimate (after Belin & Rubin 1995, METHODS.md §4): among pairs at or
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
        let c = Classifier::new(Thresholds::Probability {
            upper: 0.8,
            lower: 0.5,
        });
        assert!((c.lower - 0.0).abs() < 1e-12);
        assert!((c.upper - 2.0).abs() < 1e-12); // log2(0.8/0.2) = 2
        assert!((Classifier::probability(10.0, prior) - 0.5).abs() < 1e-12);
        assert_eq!(c.decide(c.score(12.01, prior)), Decision::Match);
        assert_eq!(c.decide(c.score(11.0, prior)), Decision::Review);
        assert_eq!(c.decide(c.score(9.99, prior)), Decision::NonMatch);
        let w = Classifier::new(Thresholds::Weight {
            upper: 12.0,
            lower: 8.0,
        });
        assert_eq!(w.decide(w.score(12.0, prior)), Decision::Match);
        assert_eq!(w.decide(w.score(9.0, -100.0)), Decision::Review);
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
            let c = Classifier::new(Thresholds::Probability { upper: 0.9, lower: 0.4 });
            let prior = prior_log2_odds(lambda);
            let (lo, hi) = if w1 <= w2 { (w1, w2) } else { (w2, w1) };
            prop_assert!(Classifier::probability(lo, prior) <= Classifier::probability(hi, prior));
            let p = Classifier::probability(hi, prior);
            match c.decide(c.score(hi, prior)) {
                Decision::Match => prop_assert!(p >= 0.9 - 1e-9),
                Decision::Review => prop_assert!((0.4 - 1e-9..0.9 + 1e-9).contains(&p)),
                Decision::NonMatch => prop_assert!(p < 0.4 + 1e-9),
            }
        }
    }
}
