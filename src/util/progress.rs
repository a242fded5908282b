//! Progress bars on stderr, silent when asked to be or when stderr is not a terminal.

use std::io::IsTerminal;
use std::time::Duration;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

/// A progress display for one stage; does nothing when hidden.
#[derive(Debug, Clone)]
pub struct Progress {
    bar: Option<ProgressBar>,
}

impl Progress {
    /// A display that shows nothing.
    pub fn hidden() -> Progress {
        Progress { bar: None }
    }

    /// A bar of `len` units named `stage`, shown only when `enabled` and stderr is a
    /// terminal.
    pub fn bar(enabled: bool, stage: &str, len: u64, unit: &str) -> Progress {
        if !enabled || !std::io::stderr().is_terminal() {
            return Progress::hidden();
        }
        let bar = ProgressBar::with_draw_target(Some(len), ProgressDrawTarget::stderr_with_hz(8));
        let template = format!(
            "{{prefix:>24}} [{{bar:30}}] {{human_pos}}/{{human_len}} {unit} {{per_sec}} ETA {{eta}}"
        );
        if let Ok(style) = ProgressStyle::with_template(&template) {
            bar.set_style(style.progress_chars("=> "));
        }
        bar.set_prefix(stage.to_string());
        Progress { bar: Some(bar) }
    }

    /// A counter without a known end (e.g. rows read).
    pub fn counter(enabled: bool, stage: &str, unit: &str) -> Progress {
        if !enabled || !std::io::stderr().is_terminal() {
            return Progress::hidden();
        }
        let bar = ProgressBar::with_draw_target(None, ProgressDrawTarget::stderr_with_hz(8));
        let template = format!("{{prefix:>24}} {{spinner}} {{human_pos}} {unit} {{per_sec}}");
        if let Ok(style) = ProgressStyle::with_template(&template) {
            bar.set_style(style);
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
