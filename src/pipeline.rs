//! Pipeline: a spec in, a finished run (outputs on disk and a [`RunSummary`]) out.
//!
//! Orchestration only: [`Prepared`] reads, standardizes and blocks once; the model is
//! fitted ([`crate::model::train`]) or loaded; [`score_all`] scores every candidate
//! pair once and hands it to the output sinks ([`crate::output`]); matched pairs are
//! clustered under the spec's guards ([`SpecGuards`]) and get customer keys
//! ([`crate::keys`]). Candidate pairs are never stored as a whole: pass 1 (fitting)
//! only counts comparison vectors, pass 2 streams scored pairs into the sinks.

use std::path::PathBuf;
use std::time::Instant;

use crate::cluster::SpecGuards;
use crate::decide::Decider;
use crate::error::{Error, Result};
use crate::model::{self, Model};
use crate::output::{
    write_clusters, write_rejects, write_summary, MatchEdges, PairsFile, PairsOutput, ReviewFile,
    Staging,
};
use crate::prepare::{PrepareOptions, Prepared};
use crate::score::{score_all, threshold_for_target, PairScorer};
use crate::shards::record_run_facts;
use crate::spec::Spec;
use crate::summary::{KeySummary, RunSummary};
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

    record_run_facts(
        &mut staging,
        spec,
        scorer.decider(),
        opts.model.as_deref(),
        opts.shard,
    )?;
    staging.set_meta("pairs", opts.pairs.name());
    if let Some(t) = opts.target_precision {
        staging.set_meta("target_precision", t.to_string());
    }
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
        let guards = SpecGuards::new(spec, &p.table, &p.comparison);
        let c = guards.cluster(&p.table, &edges.edges);
        write_clusters(&mut staging, &p.table, &c, &guards.unique_names)?;
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
        keys: KeySummary::of(&p.blocking, &stats.per_key),
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
    write_summary(&mut staging, &mut summary, &opts.out)?;
    summary.outputs = staging.commit()?;
    spin.finish();
    summary.timings.record("write outputs", clock);
    summary.timings.process_cpu = process_cpu_time()
        .zip(cpu_start)
        .map(|(b, a)| b.saturating_sub(a));
    Ok(summary)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::testdata::mini_spec;

    #[test]
    fn a_run_writes_every_output_and_counts_every_pair() {
        let spec = mini_spec();
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
        let rows = std::fs::read_to_string(dir.path().join("pairs.csv"))
            .unwrap()
            .lines()
            .count() as u64
            - 1;
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
    fn a_shard_run_needs_a_model() {
        let spec = mini_spec();
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
