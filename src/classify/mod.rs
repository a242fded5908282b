//! Classify: a pair's match weight in, its match probability and decision out.
//!
//! The match weight is the log2 likelihood ratio `Σ log2(m/u)` over the compared
//! attributes (missing values add nothing). With the match prior λ over all record pairs
//! the match probability is `1 / (1 + 2^-(W + log2(λ / (1 − λ))))`. Thresholds are given as
//! probabilities or as weights; both become weight thresholds here, so deciding a pair is
//! two comparisons.

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
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Classifier {
    /// Weight at or above which a pair is a match.
    pub upper: f64,
    /// Weight at or above which (and below `upper`) a pair goes to review.
    pub lower: f64,
    /// `log2(λ / (1 − λ))`, the prior odds of a match over all record pairs.
    pub prior_log2_odds: f64,
}

impl Classifier {
    /// Build from the spec's thresholds and the match prior `lambda` over all pairs.
    pub fn new(thresholds: Thresholds, lambda: f64) -> Classifier {
        let lambda = lambda.clamp(1e-300, 1.0 - 1e-12);
        let prior_log2_odds = (lambda / (1.0 - lambda)).log2();
        let (upper, lower) = match thresholds {
            Thresholds::Weight { upper, lower } => (upper, lower),
            Thresholds::Probability { upper, lower } => (
                log2_odds(upper) - prior_log2_odds,
                log2_odds(lower) - prior_log2_odds,
            ),
        };
        Classifier {
            upper,
            lower,
            prior_log2_odds,
        }
    }

    /// Match probability of a pair with weight `w`.
    #[inline]
    pub fn probability(&self, w: f64) -> f64 {
        1.0 / (1.0 + (-(w + self.prior_log2_odds)).exp2())
    }

    /// Decision for weight `w`.
    #[inline]
    pub fn decide(&self, w: f64) -> Decision {
        if w >= self.upper {
            Decision::Match
        } else if w >= self.lower {
            Decision::Review
        } else {
            Decision::NonMatch
        }
    }
}

fn log2_odds(p: f64) -> f64 {
    (p / (1.0 - p)).log2()
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn probability_thresholds_become_weights() {
        // λ = 1/1025: prior odds 1:1024, log2 = -10.
        let c = Classifier::new(
            Thresholds::Probability {
                upper: 0.8,
                lower: 0.5,
            },
            1.0 / 1025.0,
        );
        assert!((c.prior_log2_odds + 10.0).abs() < 1e-9);
        assert!((c.lower - 10.0).abs() < 1e-9);
        assert!((c.upper - 12.0).abs() < 1e-9); // log2(0.8/0.2) = 2
        assert!((c.probability(10.0) - 0.5).abs() < 1e-12);
        assert_eq!(c.decide(12.0), Decision::Match);
        assert_eq!(c.decide(11.0), Decision::Review);
        assert_eq!(c.decide(9.99), Decision::NonMatch);
    }

    proptest! {
        #[test]
        fn probability_is_monotone_and_agrees_with_decision(
            lambda in 1e-9f64..0.5, w1 in -40.0f64..40.0, w2 in -40.0f64..40.0
        ) {
            let c = Classifier::new(Thresholds::Probability { upper: 0.9, lower: 0.4 }, lambda);
            let (lo, hi) = if w1 <= w2 { (w1, w2) } else { (w2, w1) };
            prop_assert!(c.probability(lo) <= c.probability(hi));
            let p = c.probability(hi);
            match c.decide(hi) {
                Decision::Match => prop_assert!(p >= 0.9 - 1e-9),
                Decision::Review => prop_assert!((0.4 - 1e-9..0.9 + 1e-9).contains(&p)),
                Decision::NonMatch => prop_assert!(p < 0.4 + 1e-9),
            }
        }
    }
}
