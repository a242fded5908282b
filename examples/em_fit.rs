//! Fit the Fellegi–Sunter model by EM on a pattern-count CSV and print the
//! parameters as JSON (used by `tests/reference/stepmix_check.py`).
//!
//! In: a CSV whose columns are one level code per attribute, then `count` (further
//! columns such as `true_matches` are ignored), e.g.
//! `tests/data/em_reference_patterns.csv`. Codes run from the strongest agreement
//! (0) downwards, as in samekey; with `--levels-ascending` they run the other way
//! (0 = disagree), as in that file, and are mirrored on the way in and out.
//!
//! Out (stdout): `{"fields", "lambda", "m", "u", "loglik", "iterations",
//! "converged", "swapped"}` with m and u in the file's level order.
//!
//! ```text
//! cargo run --example em_fit -- tests/data/em_reference_patterns.csv --levels-ascending
//! ```

use anyhow::{bail, Context};
use samekey::model::em::{self, EmOptions, PatternCounts, MISSING_LEVEL};

fn main() -> anyhow::Result<()> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let ascending = args.iter().any(|a| a == "--levels-ascending");
    let Some(path) = args.iter().find(|a| !a.starts_with("--")) else {
        bail!("usage: em_fit PATTERNS.csv [--levels-ascending]");
    };

    let mut rdr = csv::Reader::from_path(path).with_context(|| format!("opening `{path}`"))?;
    let headers = rdr.headers()?.clone();
    let Some(count_col) = headers.iter().position(|h| h == "count") else {
        bail!("`{path}`: no `count` column (found {headers:?})");
    };
    let fields: Vec<String> = headers.iter().take(count_col).map(String::from).collect();
    let mut rows: Vec<(Vec<u8>, u64)> = Vec::new();
    for rec in rdr.records() {
        let rec = rec.with_context(|| format!("reading `{path}`"))?;
        let line = rec.position().map_or(0, |p| p.line());
        let codes = (0..count_col)
            .map(|k| match rec[k].trim() {
                "" => Ok(MISSING_LEVEL),
                s => s.parse::<u8>(),
            })
            .collect::<Result<Vec<u8>, _>>()
            .with_context(|| format!("`{path}` line {line}: level codes must be 0..254"))?;
        let count = rec[count_col]
            .trim()
            .parse::<u64>()
            .with_context(|| format!("`{path}` line {line}: bad count"))?;
        rows.push((codes, count));
    }
    let mut n_levels = vec![1usize; count_col];
    for (codes, _) in &rows {
        for (k, &c) in codes.iter().enumerate() {
            if c != MISSING_LEVEL {
                n_levels[k] = n_levels[k].max(c as usize + 1);
            }
        }
    }
    let flip = |k: usize, c: u8| {
        if ascending && c != MISSING_LEVEL {
            (n_levels[k] - 1) as u8 - c
        } else {
            c
        }
    };
    let mut data = PatternCounts::new(n_levels.clone());
    for (codes, count) in &rows {
        let codes: Vec<u8> = codes.iter().enumerate().map(|(k, &c)| flip(k, c)).collect();
        data.add(&codes, *count)?;
    }

    let init = em::default_init(&n_levels, 0.1);
    // Tight stopping so the comparison measures the model, not the stopping rule.
    let opts = EmOptions {
        rel_tol_loglik: 0.0,
        param_tol: 1e-12,
        max_iterations: 10_000,
        ..EmOptions::default()
    };
    let fit = em::fit(&data, &init, &opts)?;
    let order = |rows: &[Vec<f64>]| -> Vec<Vec<f64>> {
        rows.iter()
            .map(|r| {
                let mut r = r.clone();
                if ascending {
                    r.reverse();
                }
                r
            })
            .collect()
    };
    let out = serde_json::json!({
        "fields": fields,
        "lambda": fit.params.lambda,
        "m": order(&fit.params.m),
        "u": order(&fit.params.u),
        "loglik": fit.loglik,
        "iterations": fit.iterations,
        "converged": fit.converged,
        "swapped": fit.swapped,
    });
    println!("{}", serde_json::to_string_pretty(&out)?);
    Ok(())
}
