//! Pipeline: a spec in, a finished run (outputs on disk and a [`RunSummary`]) out.
//!
//! Stages: sources (read + standardize) → block → compare → model (fit by EM, or load)
//! → decide → cluster → keys → output. Candidate pairs are never stored as a whole:
//! a first pass over the blocks only counts comparison vectors per blocking key (for
//! EM), a second pass scores every pair and keeps the matched and review pairs. Both
//! passes run block tasks in parallel and combine per-chunk results in a fixed order,
//! so the outputs do not depend on the number of threads.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use rayon::prelude::*;

use crate::block::{Blocking, Task};
use crate::cluster::{cluster_with, Edge, Guards};
use crate::compare::{Comparison, Gamma};
use crate::decide::{Decider, Decision, Estimate, Scored, WeightHistogram};
use crate::error::{Error, Result};
use crate::model::{self, KeyCounts, Model};
use crate::output::{push_field, write_rejects, Staging};
use crate::record::RecordTable;
use crate::score::PairScorer;
use crate::sources::{self, SourceReport};
use crate::spec::Spec;
use crate::standardize::StdStats;
use crate::util::cpu::process_cpu_time;
use crate::util::Progress;

/// Which scored pairs go to `pairs.csv`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum PairsOutput {
    /// Every candidate pair, whatever its decision.
    #[default]
    All,
    /// Only pairs decided `match` or `review`.
    Linked,
}

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

/// Candidate pairs of one blocking key.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct KeySummary {
    /// Key name.
    pub name: String,
    /// Pairs inside the key's blocks.
    pub raw_pairs: u64,
    /// Pairs first produced by this key (compared).
    pub new_pairs: u64,
    /// Number of blocks.
    pub blocks: usize,
    /// Largest block size.
    pub largest_block: usize,
}

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
    fn record(&mut self, stage: &'static str, since: Instant) -> Instant {
        self.stages.push((stage, since.elapsed()));
        Instant::now()
    }
}

/// What a run did.
#[derive(Debug, Clone)]
pub struct RunSummary {
    /// Per source: rows read, accepted, rejected.
    pub sources: Vec<SourceReport>,
    /// Standardization counts.
    pub std_stats: StdStats,
    /// Records linked.
    pub records: usize,
    /// Per blocking key.
    pub keys: Vec<KeySummary>,
    /// The model used.
    pub model: Model,
    /// True when the model was fitted in this run (false: loaded with `--model`).
    pub fitted: bool,
    /// The decision thresholds (as log2 odds).
    pub decider: Decider,
    /// The model's own estimate of precision and recall at the match threshold.
    pub estimate: Estimate,
    /// Pairs per decision: match, review, non-match.
    pub decisions: [u64; 3],
    /// Customers (clusters) found (0 for a shard run).
    pub customers: usize,
    /// The shard scored, if the run was one shard of several.
    pub shard: Option<(usize, usize)>,
    /// Merges refused by the clustering guards.
    pub refused_merges: usize,
    /// Files written.
    pub outputs: Vec<PathBuf>,
    /// Wall time per stage.
    pub timings: Timings,
}

impl RunSummary {
    /// All candidate pairs compared.
    pub fn candidate_pairs(&self) -> u64 {
        self.keys.iter().map(|k| k.new_pairs).sum()
    }
}

/// Run the whole pipeline and write the outputs.
pub fn run(spec: &Spec, opts: &RunOptions) -> Result<RunSummary> {
    let mut t = Timings::default();
    let mut clock = Instant::now();
    let cpu_start = process_cpu_time();
    // Load the model first: a bad model file should fail before the heavy work.
    let loaded_model = match &opts.model {
        Some(p) => Some(Model::load(p, spec)?),
        None => None,
    };
    let bar = Progress::counter(opts.progress, "read + standardize", "rows");
    let loaded = sources::load_with(&spec.sources, &bar)?;
    bar.finish();
    t.standardize_cpu = loaded.standardize_cpu;
    let table = loaded.table;
    if table.len() < 2 {
        return Err(Error::Usage(format!(
            "only {} usable record(s) were read; linking needs at least two (see rejects)",
            table.len()
        )));
    }
    clock = t.record("read + standardize", clock);

    let blocking = Blocking::build(&table, &spec.blocks, spec.model.max_pairs_per_key)?;
    let comparison = Comparison::new(&spec.compares, &table);
    let mut tasks = blocking.tasks();
    if let Some((i, n)) = opts.shard {
        if opts.model.is_none() {
            return Err(Error::Usage(
                "a sharded run needs a model fitted on all the data: run `samekey train` first \
                 and pass it with --model"
                    .into(),
            ));
        }
        tasks.retain(|task| blocking.shard_of(task, n) == i);
    }
    clock = t.record("block", clock);

    let mut counts = None;
    let (model, fitted) = match loaded_model {
        Some(m) => (m, false),
        None => {
            let bar = Progress::bar(opts.progress, "count vectors", tasks.len() as u64, "tasks");
            let (m, c) = fit_model(spec, &table, &blocking, &comparison, &tasks, &bar, &mut t)?;
            bar.finish();
            counts = Some(c);
            clock = Instant::now();
            (m, true)
        }
    };
    let mut scorer = PairScorer::new(
        model::Scorer::new(&model, &comparison, &table, &spec.blocks),
        Decider::new(spec.decide),
        comparison.len(),
    );
    if let Some(target) = opts.target_precision {
        let c = match counts {
            Some(c) => c,
            None => model::train::count_patterns(
                spec,
                &table,
                &blocking,
                &comparison,
                &tasks,
                &Progress::hidden(),
            )?,
        };
        let decider = threshold_for_target(scorer.decider(), scorer.model_scorer(), &c, target)?;
        scorer.set_decider(decider);
        clock = t.record("choose threshold", clock);
    }

    let mut staging = Staging::new(&opts.out)?;
    let bar = Progress::bar(opts.progress, "score pairs", tasks.len() as u64, "tasks");
    let scored = score(
        &table,
        &blocking,
        &comparison,
        &scorer,
        &tasks,
        opts.pairs,
        &mut staging,
        &bar,
    )?;
    bar.finish();
    clock = t.record("score + write pairs", clock);

    let clusters = if opts.shard.is_some() {
        None
    } else {
        let edges: Vec<Edge> = scored
            .linked
            .iter()
            .filter(|p| p.decision() == Decision::Match)
            .map(|p| Edge {
                a: p.a,
                b: p.b,
                weight: p.scored.evidence,
            })
            .collect();
        let c = cluster_and_write(spec, &table, &edges, &mut staging)?;
        clock = t.record("cluster + keys", clock);
        Some(c)
    };
    write_review(&mut staging, &table, &comparison, &scorer, &scored.linked)?;
    let decider = *scorer.decider();
    let mut w = staging.csv("rejects.csv")?;
    write_rejects(&mut w, &loaded.rejects)?;
    w.finish()?;
    let model_path = staging.path("model.toml");
    model.save(&model_path)?;
    let outputs = staging.commit()?;
    t.record("write outputs", clock);

    let keys_summary = blocking
        .keys
        .iter()
        .zip(&scored.per_key)
        .map(|(kb, &new_pairs)| KeySummary {
            name: kb.name.clone(),
            raw_pairs: kb.raw_pairs(),
            new_pairs,
            blocks: kb.len(),
            largest_block: kb.largest(1).first().map_or(0, |x| x.1),
        })
        .collect();
    Ok(RunSummary {
        sources: loaded.reports,
        std_stats: loaded.stats,
        records: table.len(),
        keys: keys_summary,
        model,
        fitted,
        decider,
        decisions: scored.decisions,
        estimate: scored.histogram.estimate(decider.upper),
        customers: clusters.as_ref().map_or(0, |c| c.count()),
        refused_merges: clusters.as_ref().map_or(0, |c| c.refused.len()),
        shard: opts.shard,
        outputs,
        timings: Timings {
            process_cpu: process_cpu_time()
                .zip(cpu_start)
                .map(|(b, a)| b.saturating_sub(a)),
            ..t
        },
    })
}

/// Cluster matched edges with the spec's guards, assign keys, and stage
/// `crosswalk.csv` and `refused.csv`.
fn cluster_and_write(
    spec: &Spec,
    table: &RecordTable,
    edges: &[Edge],
    staging: &mut Staging,
) -> Result<crate::cluster::Clusters> {
    let guards = guards_of(spec, table);
    // A unique attribute that is also compared conflicts only beyond its last agreement
    // level, so a birth date with a swapped day and month does not block a merge.
    let comparison = Comparison::new(&spec.compares, table);
    let comparators: Vec<Option<&crate::compare::Comparator>> = spec
        .cluster
        .unique
        .iter()
        .map(|a| comparison.comparators.iter().find(|c| c.attr == *a))
        .collect();
    let compatible = |k: usize, x: u32, y: u32| match comparators[k] {
        Some(c) => c.level(x, y) != c.disagree(),
        None => x == y,
    };
    let clusters = cluster_with(table.len(), edges, &table.source, &guards, &compatible);
    let keys = crate::keys::assign(table, &clusters.label);
    let mut w = staging.csv("crosswalk.csv")?;
    w.row(&["source", "source_id", "customer_key"])?;
    for r in 0..table.len() {
        w.row(&[table.source_name(r), table.id[r].as_str(), keys.key(r)])?;
    }
    w.finish()?;
    let mut w = staging.csv("refused.csv")?;
    w.row(&[
        "source_a",
        "id_a",
        "source_b",
        "id_b",
        "evidence_bits",
        "reason",
    ])?;
    let unique: Vec<String> = spec
        .cluster
        .unique
        .iter()
        .map(|a| a.name().to_string())
        .collect();
    for (e, why) in &clusters.refused {
        let (a, b) = (e.a as usize, e.b as usize);
        w.row(&[
            table.source_name(a),
            table.id[a].as_str(),
            table.source_name(b),
            table.id[b].as_str(),
            &format!("{:.4}", e.weight),
            &why.reason(&unique),
        ])?;
    }
    w.finish()?;
    Ok(clusters)
}

/// What `merge` did.
#[derive(Debug, Clone)]
pub struct MergeSummary {
    /// Records linked.
    pub records: usize,
    /// Matched pairs read from the shards.
    pub match_pairs: u64,
    /// Customers found.
    pub customers: usize,
    /// Merges refused by the guards.
    pub refused_merges: usize,
    /// Files written.
    pub outputs: Vec<PathBuf>,
}

/// Cluster the matched pairs of several shard runs (their `pairs.csv`) into one
/// crosswalk, exactly as an unsharded run would.
pub fn merge(spec: &Spec, shards: &[PathBuf], out: &Path) -> Result<MergeSummary> {
    let loaded = sources::load(&spec.sources)?;
    let table = loaded.table;
    let mut index: std::collections::HashMap<(&str, &str), u32> =
        std::collections::HashMap::with_capacity(table.len());
    for r in 0..table.len() {
        index.insert((table.source_name(r), table.id[r].as_str()), r as u32);
    }
    let mut edges = Vec::new();
    for dir in shards {
        let path = dir.join("pairs.csv");
        let mut rdr = csv::Reader::from_path(&path).map_err(|e| Error::Csv {
            path: path.clone(),
            source: e,
        })?;
        let headers = rdr
            .headers()
            .map_err(|e| Error::Csv {
                path: path.clone(),
                source: e,
            })?
            .clone();
        let col = |name: &str| {
            headers.iter().position(|h| h == name).ok_or_else(|| {
                Error::input(
                    &path,
                    format!("missing column `{name}`; is this a samekey pairs file?"),
                )
            })
        };
        let cols = [
            col("source_a")?,
            col("id_a")?,
            col("source_b")?,
            col("id_b")?,
        ];
        let (wcol, dcol) = (col("evidence_bits")?, col("decision")?);
        for row in rdr.records() {
            let row = row.map_err(|e| Error::Csv {
                path: path.clone(),
                source: e,
            })?;
            if row.get(dcol) != Some("match") {
                continue;
            }
            let line = row.position().map_or(0, |p| p.line());
            let rec = |s: usize, i: usize| {
                let key = (
                    row.get(cols[s]).unwrap_or(""),
                    row.get(cols[i]).unwrap_or(""),
                );
                index.get(&key).copied().ok_or_else(|| {
                    Error::input(
                        &path,
                        format!(
                            "line {line}: record `{}/{}` is not in the sources of this spec; \
                             merge shards of the same spec and data",
                            key.0, key.1
                        ),
                    )
                })
            };
            let (a, b) = (rec(0, 1)?, rec(2, 3)?);
            let weight: f64 = row.get(wcol).and_then(|w| w.parse().ok()).ok_or_else(|| {
                Error::input(
                    &path,
                    format!("line {line}: `evidence_bits` is not a number"),
                )
            })?;
            edges.push(Edge { a, b, weight });
        }
    }
    let mut staging = Staging::new(out)?;
    let clusters = cluster_and_write(spec, &table, &edges, &mut staging)?;
    let outputs = staging.commit()?;
    Ok(MergeSummary {
        records: table.len(),
        match_pairs: edges.len() as u64,
        customers: clusters.count(),
        refused_merges: clusters.refused.len(),
        outputs,
    })
}

/// The clustering guards the spec asks for.
fn guards_of(spec: &Spec, table: &RecordTable) -> Guards {
    let mut one = vec![false; spec.sources.len()];
    for &i in &spec.cluster.one_record_per_source {
        one[i] = true;
    }
    Guards {
        max_size: spec.cluster.max_size,
        one_per_source: one,
        distinct: spec
            .cluster
            .unique
            .iter()
            .map(|a| table.column(*a).ids.clone())
            .collect(),
    }
}

/// Pass 1 and the fit: count comparison vectors, estimate u, fit the model.
fn fit_model(
    spec: &Spec,
    table: &RecordTable,
    blocking: &Blocking,
    comparison: &Comparison,
    tasks: &[Task],
    progress: &Progress,
    t: &mut Timings,
) -> Result<(Model, Vec<KeyCounts>)> {
    let clock = Instant::now();
    let counts = model::train::count_patterns(spec, table, blocking, comparison, tasks, progress)?;
    let clock = t.record("compare (count vectors)", clock);
    let model = model::train::fit_counts(spec, table, comparison, &counts)?;
    t.record("fit (EM)", clock);
    Ok((model, counts))
}

/// A pair kept after scoring (match or review).
#[derive(Debug, Clone)]
struct Linked {
    a: u32,
    b: u32,
    key: usize,
    scored: Scored,
    gamma: Gamma,
}

impl Linked {
    fn decision(&self) -> Decision {
        self.scored.decision
    }
}

/// One chunk's share of pass 2.
struct ChunkScore {
    histogram: WeightHistogram,
    text: String,
    linked: Vec<Linked>,
    per_key: Vec<u64>,
    decisions: [u64; 3],
}

struct Scored2 {
    histogram: WeightHistogram,
    linked: Vec<Linked>,
    per_key: Vec<u64>,
    decisions: [u64; 3],
}

/// Pass 2: score every candidate pair, write `pairs.csv`, keep linked pairs.
#[allow(clippy::too_many_arguments)]
fn score(
    table: &RecordTable,
    blocking: &Blocking,
    comparison: &Comparison,
    scorer: &PairScorer,
    tasks: &[Task],
    which: PairsOutput,
    staging: &mut Staging,
    progress: &Progress,
) -> Result<Scored2> {
    let mut out = staging.csv("pairs.csv")?;
    out.row(&crate::output::pairs_header(comparison))?;

    let mut result = Scored2 {
        histogram: WeightHistogram::default(),
        linked: Vec::new(),
        per_key: vec![0; blocking.keys.len()],
        decisions: [0; 3],
    };
    let all_chunks = crate::util::chunks(tasks);
    // Waves bound the memory held by CSV text waiting to be written in order.
    let wave = rayon::current_num_threads().max(1) * 4;
    for group in all_chunks.chunks(wave) {
        let parts: Vec<ChunkScore> = group
            .par_iter()
            .map(|chunk| {
                let mut text = String::new();
                let mut linked = Vec::new();
                let mut per_key = vec![0u64; blocking.keys.len()];
                let mut decisions = [0u64; 3];
                let mut histogram = WeightHistogram::default();
                let mut scratch = comparison.scratch();
                for task in chunk.iter() {
                    blocking.for_each_pair(task, |a, b| {
                        per_key[task.key] += 1;
                        let g = comparison.gamma(table, a, b, &mut scratch);
                        let s = scorer.score(Some(task.key), &g, a);
                        histogram.add(s.log2_odds(), s.probability, 1);
                        decisions[s.decision as usize] += 1;
                        let pair = Linked {
                            a,
                            b,
                            key: task.key,
                            scored: s,
                            gamma: g,
                        };
                        if which == PairsOutput::All || s.decision != Decision::NonMatch {
                            pair_line(&mut text, table, comparison, scorer, &pair);
                        }
                        if s.decision != Decision::NonMatch {
                            linked.push(pair);
                        }
                    });
                    progress.inc(1);
                }
                ChunkScore {
                    histogram,
                    text,
                    linked,
                    per_key,
                    decisions,
                }
            })
            .collect();
        for ChunkScore {
            histogram,
            text,
            linked,
            per_key,
            decisions,
        } in parts
        {
            out.raw(text.as_bytes())?;
            result.histogram.merge(&histogram);
            result.linked.extend(linked);
            for (t, p) in result.per_key.iter_mut().zip(per_key) {
                *t += p;
            }
            for (t, d) in result.decisions.iter_mut().zip(decisions) {
                *t += d;
            }
        }
    }
    out.finish()?;
    Ok(result)
}

fn pair_line(
    text: &mut String,
    table: &RecordTable,
    comparison: &Comparison,
    scorer: &PairScorer,
    p: &Linked,
) {
    use std::fmt::Write;
    let (a, b) = (p.a as usize, p.b as usize);
    push_field(text, table.source_name(a));
    text.push(',');
    push_field(text, &table.id[a]);
    text.push(',');
    push_field(text, table.source_name(b));
    text.push(',');
    push_field(text, &table.id[b]);
    let s = &p.scored;
    let _ = write!(
        text,
        ",{:.4},{:.4},{:.6},{}",
        s.evidence,
        s.prior,
        s.probability,
        s.decision.name()
    );
    for (k, c) in comparison.comparators.iter().enumerate() {
        text.push(',');
        push_field(text, c.level_name(p.gamma[k]));
        let _ = write!(text, ",{:.4}", scorer.bits(Some(p.key), k, p.gamma[k], p.a));
    }
    text.push('\n');
}

/// The decider with its upper threshold moved to where the model's estimated
/// precision reaches `target`, estimated from the comparison vector counts of pass 1
/// (value-frequency adjustments left out).
fn threshold_for_target(
    decider: &Decider,
    scorer: &model::Scorer,
    counts: &[KeyCounts],
    target: f64,
) -> Result<Decider> {
    let mut h = WeightHistogram::default();
    for (k, key) in counts.iter().enumerate() {
        let prior = scorer.prior(Some(k));
        for (codes, n) in key.counts.iter() {
            let mut g = [crate::compare::MISSING_LEVEL; crate::compare::MAX_ATTRS];
            g[..codes.len()].copy_from_slice(&codes);
            // No record index: frequency adjustments need one, so use the plain weights.
            let w: f64 = (0..codes.len())
                .map(|a| scorer.contribution_plain(Some(k), a, g[a]))
                .sum();
            h.add(decider.score(w, prior), Decider::probability(w, prior), n);
        }
    }
    let Some(upper) = h.threshold_for_precision(target) else {
        let best = h.estimate(f64::INFINITY);
        return Err(Error::Usage(format!(
            "no match threshold reaches an estimated precision of {target}; the strictest \
             threshold gives {:.4}. Lower --target-precision",
            best.precision
        )));
    };
    Ok(Decider {
        upper,
        lower: decider.lower.min(upper),
    })
}

/// `review.csv`: the review pairs with the values compared, most probable first.
fn write_review(
    staging: &mut Staging,
    table: &RecordTable,
    comparison: &Comparison,
    scorer: &PairScorer,
    linked: &[Linked],
) -> Result<()> {
    let mut w = staging.csv("review.csv")?;
    w.row(&crate::output::review_header(comparison))?;
    let mut review: Vec<&Linked> = linked
        .iter()
        .filter(|p| p.decision() == Decision::Review)
        .collect();
    review.sort_by(|x, y| {
        y.scored
            .log2_odds()
            .total_cmp(&x.scored.log2_odds())
            .then(x.a.cmp(&y.a))
            .then(x.b.cmp(&y.b))
    });
    for p in review {
        let (a, b) = (p.a as usize, p.b as usize);
        let s = &p.scored;
        let mut row: Vec<String> = vec![
            table.source_name(a).to_string(),
            table.id[a].clone(),
            table.source_name(b).to_string(),
            table.id[b].clone(),
            format!("{:.4}", s.evidence),
            format!("{:.4}", s.prior),
            format!("{:.6}", s.probability),
            s.decision.name().to_string(),
        ];
        for (k, c) in comparison.comparators.iter().enumerate() {
            let code = p.gamma[k];
            row.push(c.level_name(code).to_string());
            row.push(format!("{:.4}", scorer.bits(Some(p.key), k, code, p.a)));
            row.push(table.get(a, c.attr).unwrap_or("").to_string());
            row.push(table.get(b, c.attr).unwrap_or("").to_string());
        }
        w.row(&row)?;
    }
    w.finish()
}

/// One attribute's part in an explanation.
#[derive(Debug, Clone, PartialEq)]
pub struct ExplainedAttr {
    /// Attribute name.
    pub attribute: String,
    /// Standardized value of the first record.
    pub value_a: Option<String>,
    /// Standardized value of the second record.
    pub value_b: Option<String>,
    /// Level reached (`missing` when a side has no value).
    pub level: String,
    /// Bits of evidence added.
    pub bits: f64,
}

/// Why two records get the decision they get.
#[derive(Debug, Clone, PartialEq)]
pub struct Explanation {
    /// Per compared attribute.
    pub attrs: Vec<ExplainedAttr>,
    /// Evidence: the sum of the attributes' bits.
    pub evidence: f64,
    /// Prior: log2 prior odds of the model that scored the pair.
    pub prior: f64,
    /// Probability from prior and evidence.
    pub probability: f64,
    /// The decision at the spec's thresholds.
    pub decision: Decision,
    /// Names of the blocking keys that put the two records in one block.
    pub blocked_by: Vec<String>,
}

/// Compare two records (by source name and id) with `model` and explain the result.
pub fn explain(
    spec: &Spec,
    model: &Model,
    a: (&str, &str),
    b: (&str, &str),
) -> Result<Explanation> {
    let loaded = sources::load(&spec.sources)?;
    let table = loaded.table;
    let find = |(src, id): (&str, &str)| {
        if spec.source_index(src).is_none() {
            let names: Vec<&str> = spec.sources.iter().map(|s| s.name.as_str()).collect();
            return Err(Error::Usage(format!(
                "`{src}` is not a source of this spec; the sources are {}",
                names.join(", ")
            )));
        }
        (0..table.len())
            .find(|&r| table.source_name(r) == src && table.id[r] == id)
            .map(|r| r as u32)
            .ok_or_else(|| {
                Error::Usage(format!(
                    "no record `{id}` in source `{src}` (or it was rejected)"
                ))
            })
    };
    let (ra, rb) = (find(a)?, find(b)?);
    let blocking = Blocking::build(&table, &spec.blocks, u64::MAX)?;
    let comparison = Comparison::new(&spec.compares, &table);
    let scorer = PairScorer::new(
        model::Scorer::new(model, &comparison, &table, &spec.blocks),
        Decider::new(spec.decide),
        comparison.len(),
    );
    let g = comparison.gamma(&table, ra, rb, &mut comparison.scratch());
    // The pair is scored as the first blocking key that produces it would score it.
    let key = blocking.keys.iter().position(|kb| {
        let x = kb.key_of[ra as usize];
        x != crate::block::NO_KEY && x == kb.key_of[rb as usize]
    });
    let attrs = comparison
        .comparators
        .iter()
        .enumerate()
        .map(|(k, c)| ExplainedAttr {
            attribute: c.attr.name().to_string(),
            value_a: table.get(ra as usize, c.attr).map(String::from),
            value_b: table.get(rb as usize, c.attr).map(String::from),
            level: c.level_name(g[k]).to_string(),
            bits: scorer.bits(key, k, g[k], ra),
        })
        .collect();
    let scored = scorer.score(key, &g, ra);
    let blocked_by = blocking
        .keys
        .iter()
        .filter(|kb| {
            let x = kb.key_of[ra as usize];
            x != crate::block::NO_KEY && x == kb.key_of[rb as usize]
        })
        .map(|kb| kb.name.clone())
        .collect();
    Ok(Explanation {
        attrs,
        evidence: scored.evidence,
        prior: scored.prior,
        probability: scored.probability,
        decision: scored.decision,
        blocked_by,
    })
}
