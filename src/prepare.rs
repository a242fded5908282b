//! Prepare: a spec in, a prepared run out — the standardized records, the blocks, the
//! comparison and the block tasks — built once and shared by `link`, `train` (also the
//! oracle fit), `explain` and `merge`.
//!
//! Nothing here scores or writes: see [`crate::score`] and [`crate::output`].

use std::time::Instant;

use crate::block::{Blocking, Task};
use crate::compare::Comparison;
use crate::error::{Error, Result};
use crate::record::RecordTable;
use crate::sources::{self, Reject, SourceReport};
use crate::spec::Spec;
use crate::standardize::StdStats;
use crate::util::{Progress, Timings};

/// How to prepare.
#[derive(Debug, Clone, Copy, Default)]
pub struct PrepareOptions {
    /// Show a progress counter while reading (only when stderr is a terminal).
    pub progress: bool,
    /// Refuse blocking keys with more pairs than the spec's `max_pairs_per_key`
    /// (`false` for `explain`, which enumerates no pairs).
    pub pair_limit: bool,
    /// What the records are needed for, in the "too few records" message.
    pub purpose: &'static str,
}

/// The records, blocks and comparison of one run.
#[derive(Debug)]
pub struct Prepared {
    /// Standardized records of all sources.
    pub table: RecordTable,
    /// Rejected rows, in source and line order.
    pub rejects: Vec<Reject>,
    /// One report per source (rows, accepted, rejected).
    pub reports: Vec<SourceReport>,
    /// Standardization counts.
    pub stats: StdStats,
    /// Blocks per blocking key.
    pub blocking: Blocking,
    /// One comparator per compared attribute.
    pub comparison: Comparison,
    /// Block tasks for parallel pair enumeration (all, or one shard's after [`Self::shard`]).
    pub tasks: Vec<Task>,
    /// Time spent reading and blocking.
    pub timings: Timings,
}

impl Prepared {
    /// Read and standardize the spec's sources, block and prepare the comparison.
    ///
    /// Bad input (too few usable records, a blocking key over the pair limit) is an
    /// error naming what to fix.
    pub fn new(spec: &Spec, opts: PrepareOptions) -> Result<Prepared> {
        let mut timings = Timings::default();
        let clock = Instant::now();
        let bar = Progress::counter(opts.progress, "read + standardize", "records");
        let loaded = sources::load_with(&spec.sources, &bar)?;
        bar.finish();
        timings.standardize_cpu = loaded.standardize_cpu;
        let table = loaded.table;
        if table.len() < 2 {
            let purpose = if opts.purpose.is_empty() {
                "linking"
            } else {
                opts.purpose
            };
            return Err(Error::Usage(format!(
                "only {} usable record(s) were read; {purpose} needs at least two (see the \
                 rejected rows)",
                table.len()
            )));
        }
        let clock = timings.record("read + standardize", clock);
        let limit = if opts.pair_limit {
            spec.model.max_pairs_per_key
        } else {
            u64::MAX
        };
        let blocking = Blocking::build(&table, &spec.blocks, limit)?;
        let comparison = Comparison::new(&spec.compares, &table);
        let tasks = blocking.tasks();
        timings.record("block", clock);
        Ok(Prepared {
            table,
            rejects: loaded.rejects,
            reports: loaded.reports,
            stats: loaded.stats,
            blocking,
            comparison,
            tasks,
            timings,
        })
    }

    /// Keep only the tasks of shard `i` of `n` (0-based): the blocks whose key value
    /// hashes to `i`.
    pub fn shard(&mut self, i: usize, n: usize) {
        let blocking = &self.blocking;
        self.tasks.retain(|task| blocking.shard_of(task, n) == i);
    }

    /// The record with source `source` and id `id`, if it was read and accepted.
    pub fn find(&self, source: &str, id: &str) -> Option<u32> {
        (0..self.table.len())
            .find(|&r| self.table.source_name(r) == source && self.table.id[r] == id)
            .map(|r| r as u32)
    }

    /// The indexes of the blocking keys that put records `a` and `b` in one block, in
    /// spec order (the first is the key that produces the pair in a run).
    pub fn keys_joining(&self, a: u32, b: u32) -> Vec<usize> {
        self.blocking
            .keys
            .iter()
            .enumerate()
            .filter(|(_, kb)| {
                let x = kb.key_of[a as usize];
                x != crate::block::NO_KEY && x == kb.key_of[b as usize]
            })
            .map(|(k, _)| k)
            .collect()
    }

    /// Candidate pairs the tasks enumerate per blocking key before removing pairs an
    /// earlier key produced (an upper bound for progress displays).
    pub fn task_pairs(&self, task: &Task) -> u64 {
        let n = self.blocking.keys[task.key]
            .block(task.block as usize)
            .len() as u64;
        (task.start as u64..task.end as u64)
            .map(|i| n - 1 - i)
            .sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::testdata::mini_spec;

    #[test]
    fn prepares_records_blocks_and_tasks_once() {
        let spec = mini_spec();
        let p = Prepared::new(&spec, PrepareOptions::default()).unwrap();
        assert_eq!(p.table.len(), 20);
        assert_eq!(p.blocking.keys.len(), spec.blocks.len());
        assert_eq!(p.comparison.len(), spec.compares.len());
        assert!(!p.tasks.is_empty());
        let names: Vec<&str> = p.timings.stages.iter().map(|s| s.0).collect();
        assert_eq!(names, ["read + standardize", "block"]);
        // Enumerated pairs of all tasks = pairs inside all blocks.
        let enumerated: u64 = p.tasks.iter().map(|t| p.task_pairs(t)).sum();
        let raw: u64 = p.blocking.keys.iter().map(|k| k.raw_pairs()).sum();
        assert_eq!(enumerated, raw);
    }

    #[test]
    fn shards_partition_the_tasks() {
        let spec = mini_spec();
        let all = Prepared::new(&spec, PrepareOptions::default()).unwrap();
        let mut n = 0;
        for i in 0..3 {
            let mut p = Prepared::new(&spec, PrepareOptions::default()).unwrap();
            p.shard(i, 3);
            n += p.tasks.len();
        }
        assert_eq!(n, all.tasks.len());
    }

    #[test]
    fn finds_records_and_the_keys_joining_them() {
        let spec = mini_spec();
        let p = Prepared::new(&spec, PrepareOptions::default()).unwrap();
        let a = p.find("crm", "c1").unwrap();
        let b = p.find("shop", "s1").unwrap();
        assert_eq!(p.find("crm", "nope"), None);
        let keys: Vec<&str> = p
            .keys_joining(a, b)
            .into_iter()
            .map(|k| p.blocking.keys[k].name.as_str())
            .collect();
        // tests/link.rs: explain compares crm:c1 and shop:s1 through both keys.
        assert_eq!(keys, ["postcode", "email"]);
    }
}
