//! Shards: a link run split by blocks, and the merge of the parts.
//!
//! In: the output folders of the shard runs (`samekey link --shard I/N`). Out: one
//! crosswalk, exactly as an unsharded run would give it. A shard run records in its
//! manifest what must agree across the set ([`record_run_facts`]: the shard, a
//! fingerprint of the spec's comparisons and blocking keys, the model file and the
//! thresholds); [`check_shard_set`] checks the folders are one complete set and
//! [`merge`] clusters their matched pairs.

use std::path::{Path, PathBuf};

use crate::cluster::SpecGuards;
use crate::decide::Decider;
use crate::error::{Error, Result};
use crate::output::{read_match_edges, write_clusters, Staging};
use crate::prepare::{PrepareOptions, Prepared};
use crate::spec::Spec;
use crate::summary::MergeSummary;
use crate::util::Progress;

/// A fingerprint of what decides a shard's blocks and pairs: the compared attributes and
/// levels and the blocking keys.
pub fn spec_shard_fingerprint(spec: &Spec) -> String {
    let text = format!("{}\n{:?}", spec.model_fingerprint(), spec.blocks);
    format!("{:016x}", crate::util::stable_hash(text.as_bytes()))
}

/// Record in a link run's manifest what `merge` checks: the shard (`i` of `n`, 0-based
/// `i`), the spec and model file it was scored with and its thresholds.
pub fn record_run_facts(
    staging: &mut Staging,
    spec: &Spec,
    decider: &Decider,
    model: Option<&Path>,
    shard: Option<(usize, usize)>,
) -> Result<()> {
    staging.set_meta("command", "link");
    staging.set_meta("spec_fingerprint", spec_shard_fingerprint(spec));
    staging.set_meta(
        "thresholds",
        format!("{:.6}/{:.6}", decider.upper, decider.lower),
    );
    if let Some(p) = model {
        let bytes = std::fs::read(p).map_err(|e| Error::io(p, e))?;
        staging.set_meta(
            "model_fingerprint",
            format!("{:016x}", crate::util::stable_hash(&bytes)),
        );
    }
    if let Some((i, n)) = shard {
        staging.set_meta("shard", format!("{}/{n}", i + 1));
    }
    Ok(())
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
    let guards = SpecGuards::new(spec, &p.table, &p.comparison);
    let clusters = guards.cluster(&p.table, &edges);
    write_clusters(&mut staging, &p.table, &clusters, &guards.unique_names)?;
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
    use crate::pipeline::{run, RunOptions};
    use crate::testdata::mini_spec;

    fn read(path: &Path) -> String {
        std::fs::read_to_string(path).unwrap()
    }

    #[test]
    fn shards_merged_give_the_unsharded_crosswalk() {
        let spec = mini_spec();
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
}
