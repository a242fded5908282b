//! Wall time per stage and CPU time of a run, for `--timings` and the summaries.

use std::time::{Duration, Instant};

/// Time spent per stage.
#[derive(Debug, Clone, Default)]
pub struct Timings {
    /// (stage, wall time), in order.
    pub stages: Vec<(&'static str, Duration)>,
    /// CPU time of the whole run, all threads (`None` where the clock is missing).
    pub process_cpu: Option<Duration>,
    /// CPU time spent standardizing values, all threads.
    pub standardize_cpu: Duration,
}

impl Timings {
    /// Record `stage` as having run since `since`; returns now, the start of the next.
    pub fn record(&mut self, stage: &'static str, since: Instant) -> Instant {
        self.stages.push((stage, since.elapsed()));
        Instant::now()
    }

    /// Append the stages of `other` (and add its standardization CPU time).
    pub fn extend(&mut self, other: &Timings) {
        self.stages.extend(other.stages.iter().cloned());
        self.standardize_cpu += other.standardize_cpu;
    }

    /// Sum of the stages' wall times.
    pub fn total(&self) -> Duration {
        self.stages.iter().map(|(_, d)| *d).sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn stages_in_order_and_totals() {
        let mut t = Timings::default();
        let start = Instant::now();
        let next = t.record("read", start);
        assert!(next >= start);
        t.record("block", next);
        let mut u = Timings {
            standardize_cpu: Duration::from_millis(5),
            ..Timings::default()
        };
        u.stages.push(("score", Duration::from_millis(7)));
        t.extend(&u);
        let names: Vec<&str> = t.stages.iter().map(|s| s.0).collect();
        assert_eq!(names, ["read", "block", "score"]);
        assert!(t.total() >= Duration::from_millis(7));
        assert_eq!(t.standardize_cpu, Duration::from_millis(5));
    }
}
