//! Command-line interface: one file per subcommand, each exporting `Args` and `run`.
//!
//! Exit codes: 0 success, 2 bad input (spec, data, model, flags), 1 internal failure.
//! Errors are printed with their whole chain and a `hint:` where one is known.

use std::process::ExitCode;

use clap::{Parser, Subcommand};

pub mod demo;
pub mod evaluate;
pub mod explain;
pub mod export;
pub mod link;
pub mod merge;
pub mod plan;
pub mod refresh;
pub mod summary;
pub mod synth;
pub mod train;
pub mod values;

/// Link customer records from several systems into stable customer keys.
#[derive(Debug, Parser)]
#[command(name = "samekey", version, about, long_about = None)]
pub struct Cli {
    /// Print nothing but errors: no progress, no summary, no JSON, no timings.
    #[arg(long, global = true)]
    pub quiet: bool,
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Run the whole pipeline on the shipped demo data and evaluate it against its truth.
    Demo(demo::Args),
    /// Write the store's current crosswalk and key events as CSV.
    Export(export::Args),
    /// Explain the comparison of two records, attribute by attribute.
    Explain(explain::Args),
    /// Link the sources a spec names: crosswalk, pairs, review queue, rejects, model.
    Link(link::Args),
    /// Cluster the matched pairs of several `link --shard` runs into one crosswalk.
    Merge(merge::Args),
    /// Estimate candidate pairs per blocking key before comparing anything.
    Plan(plan::Args),
    /// Re-link the sources and commit the run to the store, keeping customer keys stable.
    Refresh(refresh::Args),
    /// Fit a model on the sources a spec names and save it, without linking.
    Train(train::Args),
    /// Generate multi-source customer data with ground truth (invented scenario).
    Synth(synth::Args),
    /// Score a crosswalk (and candidate pairs) against a truth file.
    Evaluate(evaluate::Args),
}

/// Options every subcommand sees.
#[derive(Debug, Clone, Copy)]
pub struct Global {
    /// No progress output.
    pub quiet: bool,
}

/// How the process ends.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ExitStatus {
    /// Everything worked.
    Success,
    /// An internal failure (a bug, an unexpected I/O failure).
    Failure,
    /// Bad input: spec, data, model file or command-line flags.
    BadInput,
}

impl From<ExitStatus> for ExitCode {
    fn from(s: ExitStatus) -> ExitCode {
        match s {
            ExitStatus::Success => ExitCode::from(0),
            ExitStatus::Failure => ExitCode::from(1),
            ExitStatus::BadInput => ExitCode::from(2),
        }
    }
}

/// Classify an error chain: bad input if any cause is a library bad-input error.
pub fn status_of(err: &anyhow::Error) -> ExitStatus {
    for cause in err.chain() {
        if let Some(e) = cause.downcast_ref::<samekey::Error>() {
            return if e.is_bad_input() {
                ExitStatus::BadInput
            } else {
                ExitStatus::Failure
            };
        }
        if cause.downcast_ref::<clap::Error>().is_some() {
            return ExitStatus::BadInput;
        }
    }
    ExitStatus::Failure
}

/// Parse arguments, run, print errors, map to an exit code.
pub fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() {
                ExitStatus::BadInput
            } else {
                ExitStatus::Success
            };
            let _ = e.print();
            return code.into();
        }
    };
    let global = Global { quiet: cli.quiet };
    let result = match &cli.command {
        Command::Demo(a) => demo::run(a, global),
        Command::Explain(a) => explain::run(a, global),
        Command::Export(a) => export::run(a, global),
        Command::Link(a) => link::run(a, global),
        Command::Merge(a) => merge::run(a, global),
        Command::Plan(a) => plan::run(a, global),
        Command::Refresh(a) => refresh::run(a, global),
        Command::Train(a) => train::run(a, global),
        Command::Synth(a) => synth::run(a, global),
        Command::Evaluate(a) => evaluate::run(a, global),
    };
    match result {
        Ok(()) => ExitStatus::Success.into(),
        Err(err) => {
            // A closed stdout (e.g. piped into `head`) is not a failure.
            if err.chain().any(|c| {
                c.downcast_ref::<std::io::Error>()
                    .is_some_and(|e| e.kind() == std::io::ErrorKind::BrokenPipe)
            }) {
                return ExitStatus::Success.into();
            }
            let hint = hint_for(&err);
            let parts: Vec<String> = err
                .chain()
                .map(|c| c.to_string())
                .filter(|m| hint.as_deref() != Some(m.as_str()))
                .collect();
            eprintln!("error: {}", parts.join(": "));
            if let Some(hint) = hint {
                eprintln!("\nhint: {hint}");
            }
            status_of(&err).into()
        }
    }
}

/// A hint attached to the error chain with [`Hint`], if any.
fn hint_for(err: &anyhow::Error) -> Option<String> {
    err.downcast_ref::<Hint>().map(|h| h.0.clone())
}

/// A `hint:` line to print after an error; attach with `.context(Hint(..))`.
#[derive(Debug)]
pub struct Hint(pub String);

impl std::fmt::Display for Hint {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&self.0)
    }
}
impl std::error::Error for Hint {}
