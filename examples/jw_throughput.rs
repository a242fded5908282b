//! One-core Jaro–Winkler throughput of `JaroMatcher`, all names against all names.
//!
//! In: a UTF-8 file with one name per line. Out (stdout): `key=value` lines with the number of
//! pairs, the best wall time over the repeats and pairs per second, for samekey's
//! `JaroMatcher` (`samekey_*`: `jaro_winkler_corpus` against a `JaroCorpus` of all names, the
//! fastest API; `samekey_many_*`: `jaro_winkler_many` over `&[&str]`; `samekey_single_*`: one
//! `jaro_winkler` call per pair) and, for reference, `strsim::jaro_winkler`. With `--sample-out FILE` it also
//! writes the scores of the first `--sample-rows` names against every name
//! (`row<TAB>col<TAB>score`), so another implementation can be checked against them.
//!
//! ```text
//! cargo run --release --example jw_throughput -- names.txt --repeat 3 --sample-out s.tsv
//! ```
//! `bench/kernel_vs_rapidfuzz.py` drives this and compares with rapidfuzz.

use std::fs;
use std::io::{BufWriter, Write};
use std::time::Instant;

use anyhow::{bail, Context, Result};
use samekey::compare::strings::{JaroCorpus, JaroMatcher};

struct Args {
    names: String,
    repeat: usize,
    sample_out: Option<String>,
    sample_rows: usize,
    strsim: bool,
}

fn parse_args() -> Result<Args> {
    let mut it = std::env::args().skip(1);
    let mut args = Args {
        names: String::new(),
        repeat: 3,
        sample_out: None,
        sample_rows: 20,
        strsim: true,
    };
    while let Some(a) = it.next() {
        let mut value = |flag: &str| it.next().with_context(|| format!("`{flag}` needs a value"));
        match a.as_str() {
            "--repeat" => args.repeat = value("--repeat")?.parse().context("`--repeat`")?,
            "--sample-out" => args.sample_out = Some(value("--sample-out")?),
            "--sample-rows" => {
                args.sample_rows = value("--sample-rows")?.parse().context("`--sample-rows`")?
            }
            "--no-strsim" => args.strsim = false,
            _ if a.starts_with("--") => bail!("unknown option `{a}`"),
            _ if args.names.is_empty() => args.names = a,
            _ => bail!("unexpected argument `{a}`"),
        }
    }
    if args.names.is_empty() {
        bail!(
            "usage: jw_throughput NAMES_FILE [--repeat N] [--sample-out FILE] \
             [--sample-rows N] [--no-strsim]"
        );
    }
    args.repeat = args.repeat.max(1);
    Ok(args)
}

/// Best wall time of `repeat` runs of `f`, and the value of the last run.
fn best_of(repeat: usize, mut f: impl FnMut() -> f64) -> (f64, f64) {
    let mut best = f64::INFINITY;
    let mut value = 0.0;
    for _ in 0..repeat {
        let start = Instant::now();
        value = std::hint::black_box(f());
        best = best.min(start.elapsed().as_secs_f64());
    }
    (best, value)
}

fn main() -> Result<()> {
    let args = parse_args()?;
    let text = fs::read_to_string(&args.names)
        .with_context(|| format!("reading names from `{}`", args.names))?;
    let names: Vec<&str> = text.lines().collect();
    let pairs = (names.len() * names.len()) as f64;
    println!("names={}", names.len());
    println!("pairs={}", names.len() * names.len());

    // The fastest public API: the names prepared once as a corpus (as cdist prepares its
    // choices), each query scored against all of them into one row of the matrix.
    let corpus = JaroCorpus::new(&names);
    let mut row = vec![0.0; names.len()];
    let (secs, sum) = best_of(args.repeat, || {
        let mut sum = 0.0;
        for q in &names {
            JaroMatcher::new(q).jaro_winkler_corpus(&corpus, &mut row);
            sum += row.iter().sum::<f64>();
        }
        sum
    });
    println!("samekey_seconds={secs:.6}");
    println!("samekey_pairs_per_sec={:.0}", pairs / secs);
    println!("samekey_checksum={sum:.9}");

    // The batch API over plain string slices (no corpus).
    let (secs, sum) = best_of(args.repeat, || {
        let mut sum = 0.0;
        for q in &names {
            JaroMatcher::new(q).jaro_winkler_many(&names, &mut row);
            sum += row.iter().sum::<f64>();
        }
        sum
    });
    println!("samekey_many_seconds={secs:.6}");
    println!("samekey_many_pairs_per_sec={:.0}", pairs / secs);
    println!("samekey_many_checksum={sum:.9}");

    // One call per pair.
    let (secs, sum) = best_of(args.repeat, || {
        let mut sum = 0.0;
        for q in &names {
            let m = JaroMatcher::new(q);
            for n in &names {
                sum += m.jaro_winkler(n);
            }
        }
        sum
    });
    println!("samekey_single_seconds={secs:.6}");
    println!("samekey_single_pairs_per_sec={:.0}", pairs / secs);
    println!("samekey_single_checksum={sum:.9}");

    if args.strsim {
        let (secs, sum) = best_of(args.repeat, || {
            let mut sum = 0.0;
            for q in &names {
                for n in &names {
                    sum += strsim::jaro_winkler(q, n);
                }
            }
            sum
        });
        println!("strsim_seconds={secs:.6}");
        println!("strsim_pairs_per_sec={:.0}", pairs / secs);
        println!("strsim_checksum={sum:.9}");
    }

    if let Some(path) = &args.sample_out {
        let file = fs::File::create(path).with_context(|| format!("creating `{path}`"))?;
        let mut out = BufWriter::new(file);
        for (i, q) in names.iter().enumerate().take(args.sample_rows) {
            JaroMatcher::new(q).jaro_winkler_corpus(&corpus, &mut row);
            for (j, score) in row.iter().enumerate() {
                writeln!(out, "{i}\t{j}\t{score:.17e}")
                    .with_context(|| format!("writing `{path}`"))?;
            }
        }
        out.flush().with_context(|| format!("writing `{path}`"))?;
    }
    Ok(())
}
