//! Pipeline: a spec in, a finished run (outputs on disk and a [`RunSummary`]) out.
//!
//! Orchestration only: [`Prepared`] reads, standardizes and blocks once; the model is
//! fitted ([`crate::model::train`]) or loaded; [`score_all`] scores every candidate
//! pair once and hands it to the output sinks ([`crate::output`]); matched pairs are
//! clustered under the spec's guards ([`SpecGuards`]) and get customer keys
//! ([`crate::keys`]). Candidate pairs are never stored as a whole: pass 1 (fitting)
//! only counts comparison vectors, pass 2 streams scored pairs into the sinks.

use std::path::{Path, PathBuf};
use std::time::Instant;

use crate::cluster::{Clusters, Edge, SpecGuards};
use crate::decide::Decider;
use crate::error::{Error, Result};
use crate::model::{self, Model};
use crate::output::{
    read_match_edges, write_crosswalk, write_refused, write_rejects, MatchEdges, PairsFile,
    PairsOutput, ReviewFile, Staging,
};
use crate::prepare::{PrepareOptions, Prepared};
use crate::record::RecordTable;
use crate::score::{score_all, threshold_for_target, PairScorer};
use crate::spec::Spec;
use crate::summary::{KeySummary, MergeSummary, RunSummary};
use crate::util::cpu::process_cpu_time;
use crate::util::Progress;

/// How to run.
#[derive(Debug, Clone, Default)]
pub struct RunOptions {
    /// Output folder.
    pub out: PathBuf,
    /// Use this fitted model instead of fitting one.
    pub model: Option<PathBuf>,
    /// Which pairs to write.
    pub pairs: PairsOutput,
    /// Choose the match threshold so that the model's estimated precision is this.
    pub target_precision: Option<f64>,
    /// Score only shard `i` of `n` (0-based `i`): the blocks whose key value hashes to
    /// `i`. A shard run writes pairs but no crosswalk; `merge` clusters all shards.
    pub shard: Option<(usize, usize)>,
    /// Show progress bars on stderr (only when it is a terminal).
    pub progress: bool,
}

/// Run the whole pipeline and write the outputs.
pub fn run(spec: &Spec, opts: &RunOptions) -> Result<RunSummary> {
    let cpu_start = process_cpu_time();
    // Check and lock the output folder first: a bad --out or a folder another run is
    // writing should fail before the heavy work (and before any input is read).
    let mut staging = Staging::new(&opts.out)?;
    // Check what needs no data first: a bad model file or flag fails before the work.
    let loaded_model = match &opts.model {
        Some(p) => Some(Model::load(p, spec)?),
        None => None,
    };
    if opts.shard.is_some() && loaded_model.is_none() {
        return Err(Error::Usage(
            "a sharded run needs a model fitted on all the data: run `samekey train` first \
             and pass it with --model"
                .into(),
        ));
    }
    let mut prepared = Prepared::new(
        spec,
        PrepareOptions {
            progress: opts.progress,
            pair_limit: true,
            purpose: "linking",
        },
    )?;
    crate::output::staging::crash_point("after-read");
    if let Some((i, n)) = opts.shard {
        prepared.shard(i, n);
    }
    let mut t = prepared.timings.clone();
    let p = &prepared;
    let pair_bar = |stage: &str| {
        let total: u64 = p.tasks.iter().map(|task| p.task_pairs(task)).sum();
        Progress::bar(opts.progress, stage, total, "pairs")
    };

    // Counts of comparison vectors, for fitting and for `--target-precision`.
    let count_vectors = || {
        let bar = pair_bar("compare (count vectors)");
        let c = model::train::count_patterns(
            spec,
            &p.table,
            &p.blocking,
            &p.comparison,
            &p.tasks,
            &bar,
        );
        bar.finish();
        c
    };
    let mut clock = Instant::now();
    let mut counts = None;
    let (model, fitted) = match loaded_model {
        Some(m) => (m, false),
        None => {
            let c = count_vectors()?;
            clock = t.record("compare (count vectors)", clock);
            let spin = Progress::spinner(opts.progress, "fit (EM)");
            let m = model::train::fit_counts(spec, &p.table, &p.comparison, &c)?;
            spin.finish();
            clock = t.record("fit (EM)", clock);
            counts = Some(c);
            (m, true)
        }
    };
    let mut scorer = PairScorer::new(
        model::Scorer::new(&model, &p.comparison, &p.table, &spec.blocks),
        Decider::new(spec.decide),
        p.comparison.len(),
    );
    if let Some(target) = opts.target_precision {
        let c = match counts {
            Some(c) => c,
            None => count_vectors()?,
        };
        let decider = threshold_for_target(scorer.decider(), scorer.model_scorer(), &c, target)?;
        scorer.set_decider(decider);
        clock = t.record("choose threshold", clock);
    }

    record_run_facts(&mut staging, spec, opts, scorer.decider())?;
    let bar = pair_bar("score + write pairs");
    let pairs = PairsFile::create(&mut staging, opts.pairs, &p.table, &p.comparison)?;
    let review = ReviewFile::new(&p.table, &p.comparison);
    let mut sink = (pairs, (review, MatchEdges::default()));
    let stats = score_all(p, &scorer, &mut sink, &bar)?;
    bar.finish();
    let (pairs, (review, edges)) = sink;
    pairs.finish()?;
    clock = t.record("score + write pairs", clock);
    crate::output::staging::crash_point("after-score");

    let clusters = if opts.shard.is_some() {
        None
    } else {
        let spin = Progress::spinner(opts.progress, "cluster + keys");
        let c = cluster_and_write(spec, p, &edges.edges, &mut staging)?;
        spin.finish();
        clock = t.record("cluster + keys", clock);
        Some(c)
    };
    let spin = Progress::spinner(opts.progress, "write outputs");
    review.write(&mut staging)?;
    let mut w = staging.csv("rejects.csv")?;
    write_rejects(&mut w, &p.rejects)?;
    w.finish()?;
    let model_path = staging.path("model.toml");
    model.save(&model_path)?;

    let decider = *scorer.decider();
    let mut summary = RunSummary {
        run_id: staging.run_id().to_string(),
        sources: p.reports.clone(),
        std_stats: p.stats.clone(),
        records: p.table.len(),
        keys: key_summaries(p, &stats.per_key),
        model,
        fitted,
        decider,
        decisions: stats.decisions,
        estimate: stats.estimate(&decider),
        customers: clusters.as_ref().map_or(0, |c| c.count()),
        refused_merges: clusters.as_ref().map_or(0, |c| c.refused.len()),
        shard: opts.shard,
        outputs: Vec::new(),
        timings: t,
    };
    // summary.json is part of the output set: it names every file beside it and holds
    // the stage timings up to this point.
    let json_path = staging.path(SUMMARY_FILE);
    summary.outputs = staging.files().iter().map(|f| opts.out.join(f)).collect();
    let text = serde_json::to_string_pretty(&summary.to_json())
        .map_err(|e| Error::Internal(format!("summary.json: {e}")))?;
    std::fs::write(&json_path, text + "\n").map_err(|e| Error::write(&json_path, e))?;
    summary.outputs = staging.commit()?;
    spin.finish();
    summary.timings.record("write outputs", clock);
    summary.timings.process_cpu = process_cpu_time()
        .zip(cpu_start)
        .map(|(b, a)| b.saturating_sub(a));
    Ok(summary)
}

/// The name of the run summary written into `link`'s output folder.
pub const SUMMARY_FILE: &str = "summary.json";

/// Per blocking key: its pairs and blocks, and `new_pairs[k]` pairs it produced first.
fn key_summaries(p: &Prepared, new_pairs: &[u64]) -> Vec<KeySummary> {
    p.blocking
        .keys
        .iter()
        .zip(new_pairs)
        .map(|(kb, &new_pairs)| KeySummary {
            name: kb.name.clone(),
            raw_pairs: kb.raw_pairs(),
            new_pairs,
            blocks: kb.len(),
            largest_block: kb.largest(1).first().map_or(0, |x| x.1),
        })
        .collect()
}

/// A fingerprint of what decides a shard's blocks and pairs: the compared attributes and
/// levels and the blocking keys.
pub fn spec_shard_fingerprint(spec: &Spec) -> String {
    let text = format!("{}\n{:?}", spec.model_fingerprint(), spec.blocks);
    format!("{:016x}", crate::util::stable_hash(text.as_bytes()))
}

/// Record in the run's manifest what `merge` checks: the shard, the spec and model it
/// was scored with and its thresholds.
fn record_run_facts(
    staging: &mut Staging,
    spec: &Spec,
    opts: &RunOptions,
    decider: &Decider,
) -> Result<()> {
    staging.set_meta("command", "link");
    staging.set_meta("spec_fingerprint", spec_shard_fingerprint(spec));
    staging.set_meta(
        "thresholds",
        format!("{:.6}/{:.6}", decider.upper, decider.lower),
    );
    if let Some(p) = &opts.model {
        let bytes = std::fs::read(p).map_err(|e| Error::io(p, e))?;
        staging.set_meta(
            "model_fingerprint",
            format!("{:016x}", crate::util::stable_hash(&bytes)),
        );
    }
    if let Some(t) = opts.target_precision {
        staging.set_meta("target_precision", t.to_string());
    }
    staging.set_meta(
        "pairs",
        match opts.pairs {
            PairsOutput::All => "all",
            PairsOutput::Linked => "linked",
        },
    );
    if let Some((i, n)) = opts.shard {
        staging.set_meta("shard", format!("{}/{n}", i + 1));
    }
    Ok(())
}

/// Cluster matched edges with the spec's guards, assign keys, and stage
/// `crosswalk.csv` and `refused.csv`.
fn cluster_and_write(
    spec: &Spec,
    p: &Prepared,
    edges: &[Edge],
    staging: &mut Staging,
) -> Result<Clusters> {
    let guards = SpecGuards::new(spec, &p.table, &p.comparison);
    let clusters = guards.cluster(&p.table, edges);
    write_keys(&p.table, &clusters, &guards, staging)?;
    Ok(clusters)
}

fn write_keys(
    table: &RecordTable,
    clusters: &Clusters,
    guards: &SpecGuards<'_>,
    staging: &mut Staging,
) -> Result<()> {
    let keys = crate::keys::assign(table, &clusters.label);
    write_crosswalk(staging, table, &keys)?;
    write_refused(staging, table, clusters, &guards.unique_names)
}

/// Cluster the matched pairs of several shard runs (their `pairs.csv`) into one
/// crosswalk, exactly as an unsharded run would.
pub fn merge(spec: &Spec, shards: &[PathBuf], out: &Path, progress: bool) -> Result<MergeSummary> {
    let mut staging = Staging::new(out)?;
    check_shard_set(spec, shards)?;
    staging.set_meta("command", "merge");
    let p = Prepared::new(
        spec,
        PrepareOptions {
            progress,
            pair_limit: false,
            purpose: "merging",
        },
    )?;
    let spin = Progress::spinner(progress, "read shard pairs");
    let mut edges = Vec::new();
    for dir in shards {
        edges.extend(read_match_edges(&dir.join("pairs.csv"), &p.table)?);
    }
    spin.finish();
    let spin = Progress::spinner(progress, "cluster + keys");
    let clusters = cluster_and_write(spec, &p, &edges, &mut staging)?;
    let outputs = staging.commit()?;
    spin.finish();
    Ok(MergeSummary {
        shards: shards.len(),
        records: p.table.len(),
        match_pairs: edges.len() as u64,
        customers: clusters.count(),
        refused_merges: clusters.refused.len(),
        outputs,
    })
}

/// Check that `shards` are the complete output of one sharded run of this spec (or one
/// whole run): each
/// folder holds a complete shard run (its manifest), all of the same shard count, spec,
/// model and thresholds, and every shard `1..=N` is given exactly once.
pub fn check_shard_set(spec: &Spec, shards: &[PathBuf]) -> Result<()> {
    use crate::output::staging::Manifest;
    let mut seen: Vec<Option<&Path>> = Vec::new();
    let mut first: Option<(&Path, Manifest)> = None;
    let want_spec = spec_shard_fingerprint(spec);
    for dir in shards {
        let m = Manifest::read_current(dir)?;
        // A whole (unsharded) run is a complete set by itself.
        if shards.len() == 1 && m.meta("shard").is_none() && m.meta("command") == Some("link") {
            return Ok(());
        }
        let Some((i, n)) = m.meta("shard").and_then(|s| {
            let (i, n) = s.split_once('/')?;
            let (i, n) = (i.parse::<usize>().ok()?, n.parse::<usize>().ok()?);
            (i >= 1 && i <= n && n <= 1 << 16).then_some((i, n))
        }) else {
            return Err(Error::input(
                dir,
                "this folder holds no shard run (its last run was not `samekey link \
                 --shard I/N`); give the output folders of the shard runs",
            ));
        };
        if m.meta("spec_fingerprint") != Some(want_spec.as_str()) {
            return Err(Error::input(
                dir,
                "this shard was run with another spec (different compared attributes, \
                 levels or blocking keys) than the one given to merge",
            ));
        }
        if let Some((fdir, f)) = &first {
            let differs = |key: &str| f.meta(key) != m.meta(key);
            let what =
                if f.meta("shard").map(|s| s.split('/').nth(1)) != Some(Some(&*n.to_string())) {
                    Some(format!(
                        "shard count ({n} against {})",
                        f.meta("shard").unwrap_or("")
                    ))
                } else if differs("model_fingerprint") {
                    Some("model file".to_string())
                } else if differs("thresholds") {
                    Some(
                        "match or review threshold (each shard chose its own with \
                     --target-precision?); run every shard with the same thresholds"
                            .to_string(),
                    )
                } else {
                    None
                };
            if let Some(what) = what {
                return Err(Error::input(
                    dir,
                    format!(
                        "this shard does not belong to the same sharded run as `{}`: \
                         different {what}",
                        fdir.display()
                    ),
                ));
            }
        } else {
            seen = vec![None; n];
        }
        if let Some(other) = seen[i - 1] {
            return Err(Error::input(
                dir,
                format!(
                    "shard {i}/{n} is given twice (also `{}`); give each shard once",
                    other.display()
                ),
            ));
        }
        seen[i - 1] = Some(dir.as_path());
        if first.is_none() {
            first = Some((dir.as_path(), m));
        }
    }
    let missing: Vec<String> = seen
        .iter()
        .enumerate()
        .filter(|(_, s)| s.is_none())
        .map(|(i, _)| format!("{}/{}", i + 1, seen.len()))
        .collect();
    if !missing.is_empty() {
        return Err(Error::Usage(format!(
            "merge needs every shard of the run; missing: {}",
            missing.join(", ")
        )));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn mini() -> Spec {
        let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/mini/spec.toml");
        Spec::load(&p).unwrap()
    }

    fn read(path: &Path) -> String {
        std::fs::read_to_string(path).unwrap()
    }

    #[test]
    fn a_run_writes_every_output_and_counts_every_pair() {
        let spec = mini();
        let dir = tempfile::tempdir().unwrap();
        let s = run(
            &spec,
            &RunOptions {
                out: dir.path().to_path_buf(),
                ..Default::default()
            },
        )
        .unwrap();
        let names: Vec<String> = s
            .outputs
            .iter()
            .map(|p| p.file_name().unwrap().to_string_lossy().into_owned())
            .collect();
        for f in [
            "pairs.csv",
            "crosswalk.csv",
            "refused.csv",
            "review.csv",
            "rejects.csv",
            "model.toml",
            "summary.json",
        ] {
            assert!(names.iter().any(|n| n == f), "{f} missing from {names:?}");
        }
        // Every candidate pair is in pairs.csv once and counted under one decision.
        let rows = read(&dir.path().join("pairs.csv")).lines().count() as u64 - 1;
        assert_eq!(rows, s.candidate_pairs());
        assert_eq!(s.decisions.iter().sum::<u64>(), s.candidate_pairs());
        assert_eq!(s.records, 20);
        assert!(s.customers > 0 && s.customers < 20);
        let stages: Vec<&str> = s.timings.stages.iter().map(|x| x.0).collect();
        assert_eq!(
            stages,
            [
                "read + standardize",
                "block",
                "compare (count vectors)",
                "fit (EM)",
                "score + write pairs",
                "cluster + keys",
                "write outputs"
            ]
        );
    }

    #[test]
    fn shards_merged_give_the_unsharded_crosswalk() {
        let spec = mini();
        let dir = tempfile::tempdir().unwrap();
        let d = dir.path();
        let full = RunOptions {
            out: d.join("full"),
            ..Default::default()
        };
        run(&spec, &full).unwrap();
        let model = d.join("full/model.toml");
        let mut shards = Vec::new();
        for i in 0..3 {
            let out = d.join(format!("shard{i}"));
            let s = run(
                &spec,
                &RunOptions {
                    out: out.clone(),
                    model: Some(model.clone()),
                    shard: Some((i, 3)),
                    ..Default::default()
                },
            )
            .unwrap();
            assert_eq!(s.customers, 0);
            shards.push(out);
        }
        let m = merge(&spec, &shards, &d.join("merged"), false).unwrap();
        assert_eq!(m.records, 20);
        assert_eq!(
            read(&d.join("merged/crosswalk.csv")),
            read(&d.join("full/crosswalk.csv"))
        );
    }

    #[test]
    fn a_shard_run_needs_a_model() {
        let spec = mini();
        let dir = tempfile::tempdir().unwrap();
        let err = run(
            &spec,
            &RunOptions {
                out: dir.path().to_path_buf(),
                shard: Some((0, 2)),
                ..Default::default()
            },
        )
        .unwrap_err();
        assert!(err.is_bad_input() && err.to_string().contains("samekey train"));
    }
}
