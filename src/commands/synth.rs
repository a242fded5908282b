//! `samekey synth`: generate multi-source customer data with ground truth.

use std::time::Instant;

use anyhow::Context;
use samekey::synth::{self, NoiseConfig, SynthConfig};

use super::Global;

/// Arguments of `samekey synth`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// Number of distinct customers to generate.
    #[arg(long, default_value_t = 1000, allow_negative_numbers = true, value_parser = super::values::positive)]
    pub customers: usize,
    /// Random seed; the same seed gives the same data.
    #[arg(long, default_value_t = 1, allow_negative_numbers = true, value_parser = super::values::seed)]
    pub seed: u64,
    /// Output folder (created if missing).
    #[arg(long)]
    pub out: std::path::PathBuf,
    /// Harder data: many more households, twins and namesakes (for testing guards).
    #[arg(long)]
    pub hard: bool,
}

/// Run `samekey synth`.
pub fn run(args: &Args, global: Global) -> anyhow::Result<()> {
    let cfg = SynthConfig {
        customers: args.customers,
        seed: args.seed,
        noise: if args.hard {
            NoiseConfig::hard()
        } else {
            NoiseConfig::default()
        },
    };
    cfg.check()?;
    samekey::output::staging::check_out_dir(&args.out, "--out")?;
    let started = Instant::now();
    if !global.quiet {
        eprintln!(
            "generating {} customers (seed {}) ...",
            cfg.customers, cfg.seed
        );
    }
    let data = synth::generate(&cfg);
    if !global.quiet {
        eprintln!(
            "generated {} records in {:.1} s; writing ...",
            data.records(),
            started.elapsed().as_secs_f64()
        );
    }
    let summary = synth::write_dataset(&data, &args.out)
        .with_context(|| format!("writing the synthetic data to `{}`", args.out.display()))?;
    if !global.quiet {
        print!("{summary}");
        eprintln!("done in {:.1} s", started.elapsed().as_secs_f64());
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn run_writes_the_files() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        let args = Args {
            hard: false,
            customers: 50,
            seed: 3,
            out: out.clone(),
        };
        run(&args, Global { quiet: true }).unwrap();
        for f in [
            "crm_contacts.csv",
            "webshop_accounts.csv",
            "support_tickets.csv",
            "truth.csv",
            "spec.toml",
        ] {
            assert!(out.join(f).is_file(), "{f}");
        }
    }

    #[test]
    fn too_many_customers_is_bad_input() {
        let dir = tempfile::tempdir().unwrap();
        let args = Args {
            hard: false,
            customers: synth::MAX_CUSTOMERS + 1,
            seed: 3,
            out: dir.path().to_path_buf(),
        };
        let err = run(&args, Global { quiet: true }).unwrap_err();
        assert_eq!(
            super::super::status_of(&err),
            super::super::ExitStatus::BadInput
        );
    }
}
