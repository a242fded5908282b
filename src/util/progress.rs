//! Progress bars on stderr, silent when asked to be or when stderr is not a terminal.
//!
//! Bars count what a person counts — rows, records, pairs — and show the rate rounded
//! in human units (`1.2M pairs/s`). Stages without a count (fitting, clustering,
//! writing) show a spinner with the stage name, so every long stage is visible.

use std::io::IsTerminal;
use std::time::Duration;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressState, ProgressStyle};

/// A progress display for one stage; does nothing when hidden.
#[derive(Debug, Clone)]
pub struct Progress {
    bar: Option<ProgressBar>,
}

/// `x` per second in human units, rounded to two or three significant digits:
/// `950 pairs/s`, `12.3k pairs/s`, `1.2M pairs/s`.
pub fn human_rate(x: f64, unit: &str) -> String {
    let (v, suffix) = if x >= 1e9 {
        (x / 1e9, "G")
    } else if x >= 1e6 {
        (x / 1e6, "M")
    } else if x >= 1e3 {
        (x / 1e3, "k")
    } else {
        (x, "")
    };
    let digits = if suffix.is_empty() || v >= 100.0 {
        0
    } else {
        1
    };
    format!("{v:.digits$}{suffix} {unit}/s")
}

/// `n` in human units: `950`, `12.3k`, `4.1M`.
pub fn human_count(n: u64) -> String {
    let x = n as f64;
    if n < 1000 {
        n.to_string()
    } else if x < 1e6 {
        format!("{:.1}k", x / 1e3)
    } else if x < 1e9 {
        format!("{:.1}M", x / 1e6)
    } else {
        format!("{:.1}G", x / 1e9)
    }
}

fn style(template: &str, unit: &str) -> Option<ProgressStyle> {
    let unit = unit.to_string();
    let unit2 = unit.clone();
    ProgressStyle::with_template(template).ok().map(|s| {
        s.with_key(
            "rate",
            move |st: &ProgressState, w: &mut dyn std::fmt::Write| {
                let _ = w.write_str(&human_rate(st.per_sec(), &unit));
            },
        )
        .with_key(
            "done",
            move |st: &ProgressState, w: &mut dyn std::fmt::Write| {
                let _ = write!(w, "{} {unit2}", human_count(st.pos()));
            },
        )
        .with_key(
            "total",
            |st: &ProgressState, w: &mut dyn std::fmt::Write| {
                let _ = w.write_str(&human_count(st.len().unwrap_or(0)));
            },
        )
    })
}

fn shown(enabled: bool) -> bool {
    enabled && std::io::stderr().is_terminal()
}

impl Progress {
    /// A display that shows nothing.
    pub fn hidden() -> Progress {
        Progress { bar: None }
    }

    /// A bar of `len` `unit`s (e.g. "pairs") named `stage`, shown only when `enabled`
    /// and stderr is a terminal.
    pub fn bar(enabled: bool, stage: &str, len: u64, unit: &str) -> Progress {
        if !shown(enabled) {
            return Progress::hidden();
        }
        let bar = ProgressBar::with_draw_target(Some(len), ProgressDrawTarget::stderr_with_hz(8));
        if let Some(s) = style(
            "{prefix:>24} [{bar:30}] {done} of {total}  {rate}  ETA {eta}",
            unit,
        ) {
            bar.set_style(s.progress_chars("=> "));
        }
        bar.set_prefix(stage.to_string());
        Progress { bar: Some(bar) }
    }

    /// A counter of `unit`s without a known end (e.g. rows read).
    pub fn counter(enabled: bool, stage: &str, unit: &str) -> Progress {
        if !shown(enabled) {
            return Progress::hidden();
        }
        let bar = ProgressBar::with_draw_target(None, ProgressDrawTarget::stderr_with_hz(8));
        if let Some(s) = style("{prefix:>24} {spinner} {done}  {rate}", unit) {
            bar.set_style(s);
        }
        bar.set_prefix(stage.to_string());
        bar.enable_steady_tick(Duration::from_millis(200));
        Progress { bar: Some(bar) }
    }

    /// A spinner for a stage without a count (fitting, clustering, writing).
    pub fn spinner(enabled: bool, stage: &str) -> Progress {
        if !shown(enabled) {
            return Progress::hidden();
        }
        let bar = ProgressBar::with_draw_target(None, ProgressDrawTarget::stderr_with_hz(8));
        if let Ok(s) = ProgressStyle::with_template("{prefix:>24} {spinner} {elapsed}") {
            bar.set_style(s);
        }
        bar.set_prefix(stage.to_string());
        bar.enable_steady_tick(Duration::from_millis(200));
        Progress { bar: Some(bar) }
    }

    /// Advance by `n` units.
    #[inline]
    pub fn inc(&self, n: u64) {
        if let Some(b) = &self.bar {
            b.inc(n);
        }
    }

    /// Remove the display.
    pub fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}

impl Drop for Progress {
    fn drop(&mut self) {
        if let Some(b) = &self.bar {
            if !b.is_finished() {
                b.finish_and_clear();
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rates_and_counts_in_human_units() {
        assert_eq!(human_rate(950.4, "pairs"), "950 pairs/s");
        assert_eq!(human_rate(12_345.0, "records"), "12.3k records/s");
        assert_eq!(human_rate(1_234_567.0, "pairs"), "1.2M pairs/s");
        assert_eq!(human_rate(123_456_789.0, "pairs"), "123M pairs/s");
        assert_eq!(human_rate(0.0, "rows"), "0 rows/s");
        assert_eq!(human_count(999), "999");
        assert_eq!(human_count(12_345), "12.3k");
        assert_eq!(human_count(4_100_000), "4.1M");
    }

    #[test]
    fn hidden_displays_do_nothing() {
        for p in [
            Progress::bar(false, "score", 10, "pairs"),
            Progress::counter(false, "read", "rows"),
            Progress::spinner(false, "fit"),
            Progress::hidden(),
        ] {
            assert!(p.bar.is_none());
            p.inc(3);
            p.finish();
        }
    }
}
