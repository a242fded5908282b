//! Block: records and blocking keys in, candidate pairs out.
//!
//! Each blocking key ([`BlockSpec`]) turns a record into a key value (for example the
//! Soundex of the family name plus the first three characters of the postcode); records
//! sharing a key value form a block and every pair inside a block is a candidate. A
//! record missing any part of a key is not blocked on that key.
//!
//! The candidate pairs of all keys are unioned without a global pair set: a pair found
//! by key `b` is skipped when an earlier key `b' < b` gives both records the same value,
//! because `b'` already produced it. So each pair is produced exactly once, by the first
//! key that finds it.
//!
//! Key values are computed once per distinct attribute value (columns are interned) and
//! interned again, so a record's key is a small integer. Work is cut into [`Task`]s (a
//! block, or a slice of a large block's rows) that callers run in parallel.

use rustc_hash::FxHashMap as HashMap;

use crate::compare::strings::soundex_of_value;
use crate::error::{Error, Result};
use crate::record::{Attr, Column, RecordTable, MISSING};
use crate::standardize::fold_for_comparison;

mod key;
pub use key::{BlockSpec, KeyFn, KeyPart, KEY_HELP};

/// Key id of a record that is not blocked on a key (some part missing).
pub const NO_KEY: u32 = u32::MAX;

/// Rows of a block handled by one task when a block is split.
const TASK_ROWS: usize = 256;

/// The blocks of one blocking key.
#[derive(Debug, Clone)]
pub struct KeyBlocks {
    /// Name of the key (from the spec).
    pub name: String,
    /// Per record, its key id or [`NO_KEY`].
    pub key_of: Vec<u32>,
    /// Records of block `k` are `members[offsets[k]..offsets[k + 1]]`, ascending.
    pub offsets: Vec<u32>,
    /// Record indexes grouped by block.
    pub members: Vec<u32>,
    /// Display value of each key id (e.g. `S530|941`).
    pub values: Vec<String>,
}

impl KeyBlocks {
    /// Number of blocks (key values).
    pub fn len(&self) -> usize {
        self.offsets.len().saturating_sub(1)
    }

    /// True when no record has this key.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Records of block `k`.
    pub fn block(&self, k: usize) -> &[u32] {
        &self.members[self.offsets[k] as usize..self.offsets[k + 1] as usize]
    }

    /// Pairs inside all blocks of this key, before removing pairs of earlier keys.
    pub fn raw_pairs(&self) -> u64 {
        (0..self.len()).map(|k| pairs_of(self.block(k).len())).sum()
    }

    /// The `n` largest blocks as (key value, records), largest first.
    pub fn largest(&self, n: usize) -> Vec<(String, usize)> {
        let mut v: Vec<(usize, usize)> =
            (0..self.len()).map(|k| (self.block(k).len(), k)).collect();
        v.sort_by(|a, b| b.0.cmp(&a.0).then(a.1.cmp(&b.1)));
        v.into_iter()
            .take(n)
            .map(|(size, k)| (self.values[k].clone(), size))
            .collect()
    }
}

/// Number of unordered pairs among `n` records.
pub fn pairs_of(n: usize) -> u64 {
    let n = n as u64;
    n * n.saturating_sub(1) / 2
}

/// A unit of pair enumeration: rows `[start, end)` of block `block` of key `key`, each
/// paired with every later row of the block.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Task {
    /// Index of the blocking key.
    pub key: usize,
    /// Block (key id) within that key.
    pub block: u32,
    /// First row (position inside the block).
    pub start: u32,
    /// One past the last row.
    pub end: u32,
}

/// All blocking keys of a run.
#[derive(Debug, Clone)]
pub struct Blocking {
    /// One entry per blocking key, in spec order.
    pub keys: Vec<KeyBlocks>,
}

impl Blocking {
    /// Build the blocks of every key; refuse a key with more than `max_pairs` pairs.
    pub fn build(table: &RecordTable, specs: &[BlockSpec], max_pairs: u64) -> Result<Blocking> {
        use rayon::prelude::*;
        // Each distinct key part is derived once, in parallel; then each key.
        let mut parts: Vec<KeyPart> = specs.iter().flat_map(|s| s.keys.iter().copied()).collect();
        parts.sort_by_key(|p| (p.attr, format!("{p}")));
        parts.dedup();
        let derived: HashMap<KeyPart, (Vec<u32>, Vec<String>)> = parts
            .par_iter()
            .map(|p| (*p, derive(table.column(p.attr), p.func)))
            .collect();
        let keys: Vec<KeyBlocks> = specs
            .par_iter()
            .map(|spec| {
                let parts: Vec<(&Vec<u32>, &Vec<String>, &Column)> = spec
                    .keys
                    .iter()
                    .map(|p| (&derived[p].0, &derived[p].1, table.column(p.attr)))
                    .collect();
                key_blocks(table.len(), &spec.name, &parts, spec.any_order)
            })
            .collect();
        for (spec, kb) in specs.iter().zip(&keys) {
            let pairs = kb.raw_pairs();
            if pairs > max_pairs {
                let top = kb
                    .largest(3)
                    .into_iter()
                    .map(|(v, n)| format!("`{v}` ({n} records)"))
                    .collect::<Vec<_>>()
                    .join(", ");
                return Err(Error::BlockTooLarge {
                    key: spec.name.clone(),
                    pairs,
                    limit: max_pairs,
                    detail: format!(
                        "largest blocks: {top}. Add a part to the key (for example \
                         prefix(postcode, 3)), use a longer prefix, or raise \
                         model.max_pairs_per_key"
                    ),
                });
            }
        }
        Ok(Blocking { keys })
    }

    /// True when an earlier key than `key` puts records `a` and `b` in one block.
    #[inline]
    pub fn seen_before(&self, key: usize, a: u32, b: u32) -> bool {
        self.keys[..key].iter().any(|k| {
            let ka = k.key_of[a as usize];
            ka != NO_KEY && ka == k.key_of[b as usize]
        })
    }

    /// The shard (of `n`) a task belongs to: a stable hash of its key and key value, so
    /// all tasks of one block land in the same shard whatever the data order.
    pub fn shard_of(&self, task: &Task, n: usize) -> usize {
        let kb = &self.keys[task.key];
        let mut bytes = kb.name.as_bytes().to_vec();
        bytes.push(0);
        bytes.extend_from_slice(kb.values[task.block as usize].as_bytes());
        (crate::util::stable_hash(&bytes) % n.max(1) as u64) as usize
    }

    /// Cut all blocks into tasks of about `TASK_ROWS` (256) rows, in a fixed order.
    pub fn tasks(&self) -> Vec<Task> {
        let mut tasks = Vec::new();
        for (key, kb) in self.keys.iter().enumerate() {
            for b in 0..kb.len() {
                let n = kb.block(b).len() as u32;
                if n < 2 {
                    continue;
                }
                let mut start = 0;
                while start < n - 1 {
                    let end = (start + TASK_ROWS as u32).min(n - 1);
                    tasks.push(Task {
                        key,
                        block: b as u32,
                        start,
                        end,
                    });
                    start = end;
                }
            }
        }
        tasks
    }

    /// Call `f(a, b, new)` for every pair of a task, with `new` false for pairs an
    /// earlier key already produced.
    #[inline]
    pub fn for_each_pair_all(&self, task: &Task, mut f: impl FnMut(u32, u32, bool)) {
        let members = self.keys[task.key].block(task.block as usize);
        for i in task.start as usize..task.end as usize {
            let a = members[i];
            for &b in &members[i + 1..] {
                f(a, b, !self.seen_before(task.key, a, b));
            }
        }
    }

    /// Call `f(a, b)` for every new pair of a task (pairs of earlier keys are skipped).
    #[inline]
    pub fn for_each_pair(&self, task: &Task, mut f: impl FnMut(u32, u32)) {
        let members = self.keys[task.key].block(task.block as usize);
        for i in task.start as usize..task.end as usize {
            let a = members[i];
            for &b in &members[i + 1..] {
                if !self.seen_before(task.key, a, b) {
                    f(a, b);
                }
            }
        }
    }
}

/// Derived key value per column value id (`NO_KEY` for missing or empty results), and
/// the distinct derived strings.
fn derive(column: &Column, func: KeyFn) -> (Vec<u32>, Vec<String>) {
    let mut lookup: HashMap<String, u32> = HashMap::default();
    let mut values = Vec::new();
    let ids = column
        .dict
        .iter()
        .enumerate()
        .map(|(id, value)| {
            if id as u32 == MISSING {
                return NO_KEY;
            }
            let derived = key_value(value, func);
            match derived {
                None => NO_KEY,
                Some(d) => *lookup.entry(d).or_insert_with_key(|d| {
                    values.push(d.clone());
                    values.len() as u32 - 1
                }),
            }
        })
        .collect();
    (ids, values)
}

/// The key value of one standardized value under `func`; `None` when it gives nothing.
pub fn key_value(value: &str, func: KeyFn) -> Option<String> {
    let out = match func {
        KeyFn::Value => value.to_string(),
        KeyFn::Soundex => soundex_of_value(value)?,
        KeyFn::Prefix(n) => fold_for_comparison(value)
            .chars()
            .filter(|c| !c.is_whitespace())
            .take(n)
            .collect(),
        KeyFn::Initial => fold_for_comparison(value)
            .chars()
            .find(|c| c.is_alphanumeric())
            .map(String::from)?,
        KeyFn::Year => {
            let y: String = value.chars().take(4).collect();
            if y.len() == 4 && y.chars().all(|c| c.is_ascii_digit()) {
                y
            } else {
                return None;
            }
        }
        KeyFn::LocalPart => {
            let (local, _) = value.rsplit_once('@')?;
            local.to_string()
        }
        KeyFn::National => crate::standardize::phone::national_number_of(value)?,
    };
    (!out.is_empty()).then_some(out)
}

fn key_blocks(
    n: usize,
    name: &str,
    parts: &[(&Vec<u32>, &Vec<String>, &Column)],
    any_order: bool,
) -> KeyBlocks {
    // With `any_order`, the parts' derived values share one id space (by their
    // strings) and each record's tuple is sorted.
    let mut shared_values: Vec<&str> = Vec::new();
    let shared: Vec<Vec<u32>> = if any_order {
        let mut ids: HashMap<&str, u32> = HashMap::default();
        parts
            .iter()
            .map(|(_, vals, _)| {
                vals.iter()
                    .map(|v| {
                        *ids.entry(v.as_str()).or_insert_with(|| {
                            shared_values.push(v.as_str());
                            shared_values.len() as u32 - 1
                        })
                    })
                    .collect()
            })
            .collect()
    } else {
        Vec::new()
    };
    // Combine the parts' derived ids into one key id per record.
    let mut combined: HashMap<Vec<u32>, u32> = HashMap::default();
    let mut values: Vec<String> = Vec::new();
    let mut key_of = vec![NO_KEY; n];
    let mut tuple = Vec::with_capacity(parts.len());
    for (r, slot) in key_of.iter_mut().enumerate() {
        tuple.clear();
        for (p, (ids, _, column)) in parts.iter().enumerate() {
            let d = ids[column.ids[r] as usize];
            if d == NO_KEY {
                break;
            }
            tuple.push(if any_order { shared[p][d as usize] } else { d });
        }
        if tuple.len() < parts.len() {
            continue;
        }
        if any_order {
            tuple.sort_unstable();
        }
        let next = combined.len() as u32;
        *slot = match combined.get(&tuple) {
            Some(&k) => k,
            None => {
                combined.insert(tuple.clone(), next);
                let text: Vec<&str> = if any_order {
                    tuple.iter().map(|&d| shared_values[d as usize]).collect()
                } else {
                    tuple
                        .iter()
                        .zip(parts)
                        .map(|(&d, (_, vals, _))| vals[d as usize].as_str())
                        .collect()
                };
                values.push(text.join("|"));
                next
            }
        };
    }
    // Counting sort of records by key id (records stay ascending inside a block).
    let mut offsets = vec![0u32; values.len() + 1];
    for &k in &key_of {
        if k != NO_KEY {
            offsets[k as usize + 1] += 1;
        }
    }
    for i in 1..offsets.len() {
        offsets[i] += offsets[i - 1];
    }
    let mut fill = offsets.clone();
    let mut members = vec![0u32; *offsets.last().unwrap_or(&0) as usize];
    for (r, &k) in key_of.iter().enumerate() {
        if k != NO_KEY {
            members[fill[k as usize] as usize] = r as u32;
            fill[k as usize] += 1;
        }
    }
    KeyBlocks {
        name: name.to_string(),
        key_of,
        offsets,
        members,
        values,
    }
}

/// Attributes used by a blocking key.
pub fn key_attrs(spec: &BlockSpec) -> Vec<Attr> {
    let mut v: Vec<Attr> = spec.keys.iter().map(|k| k.attr).collect();
    v.dedup();
    v
}

/// The estimate `plan` shows for one blocking key.
#[derive(Debug, Clone, PartialEq)]
pub struct KeyPlan {
    /// Key name.
    pub name: String,
    /// Records that have a value for every part of the key.
    pub records_keyed: usize,
    /// Number of blocks (distinct key values).
    pub blocks: usize,
    /// Pairs inside the key's blocks: the sum of n(n−1)/2 over key values.
    pub raw_pairs: u64,
    /// Estimated pairs not already produced by earlier keys: `raw_pairs` less the pairs
    /// this key shares with each earlier key (exact for the first two keys; a lower
    /// bound when three keys overlap on the same pairs).
    pub new_pairs: u64,
    /// The largest blocks: key value and records.
    pub largest: Vec<(String, usize)>,
    /// With truth: share of true matching pairs inside this key's blocks.
    pub completeness: Option<f64>,
    /// With truth: share of true matching pairs found by this key or an earlier one.
    pub cumulative_completeness: Option<f64>,
}

/// Estimate candidate pairs per key from key-value frequencies, before any comparison.
/// `entity` gives each record's true entity, when known, for pair completeness.
pub fn plan(blocking: &Blocking, entity: Option<&[u32]>, top: usize) -> Vec<KeyPlan> {
    let mut plans = Vec::with_capacity(blocking.keys.len());
    for (b, kb) in blocking.keys.iter().enumerate() {
        let raw = kb.raw_pairs();
        let mut shared = 0u64;
        for earlier in &blocking.keys[..b] {
            let mut both: HashMap<(u32, u32), u32> = HashMap::default();
            for (x, y) in kb.key_of.iter().zip(&earlier.key_of) {
                if *x != NO_KEY && *y != NO_KEY {
                    *both.entry((*x, *y)).or_insert(0) += 1;
                }
            }
            shared += both.values().map(|&n| pairs_of(n as usize)).sum::<u64>();
        }
        plans.push(KeyPlan {
            name: kb.name.clone(),
            records_keyed: kb.members.len(),
            blocks: kb.len(),
            raw_pairs: raw,
            new_pairs: raw.saturating_sub(shared),
            largest: kb.largest(top),
            completeness: None,
            cumulative_completeness: None,
        });
    }
    if let Some(entity) = entity {
        // Records per entity; true pairs are enumerated within entities (small).
        let mut members: HashMap<u32, Vec<u32>> = HashMap::default();
        for (r, &e) in entity.iter().enumerate() {
            members.entry(e).or_default().push(r as u32);
        }
        let mut total = 0u64;
        let mut found = vec![0u64; blocking.keys.len()];
        let mut found_cum = vec![0u64; blocking.keys.len()];
        for recs in members.values() {
            for (i, &a) in recs.iter().enumerate() {
                for &c in &recs[i + 1..] {
                    total += 1;
                    let mut any = false;
                    for (k, kb) in blocking.keys.iter().enumerate() {
                        let ka = kb.key_of[a as usize];
                        let hit = ka != NO_KEY && ka == kb.key_of[c as usize];
                        if hit {
                            found[k] += 1;
                        }
                        any |= hit;
                        if any {
                            found_cum[k] += 1;
                        }
                    }
                }
            }
        }
        for (k, p) in plans.iter_mut().enumerate() {
            let share = |n: u64| {
                if total == 0 {
                    1.0
                } else {
                    n as f64 / total as f64
                }
            };
            p.completeness = Some(share(found[k]));
            p.cumulative_completeness = Some(share(found_cum[k]));
        }
    }
    plans
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::record::{RecordTableBuilder, StdRecord};
    use std::collections::HashSet;

    fn table(rows: &[(&str, &str, &str)]) -> RecordTable {
        let mut b = RecordTableBuilder::new(vec!["s".into()]);
        for (i, (fam, pc, email)) in rows.iter().enumerate() {
            let mut r = StdRecord::default();
            r.set(Attr::FamilyName, Some(fam.to_string()));
            r.set(Attr::Postcode, Some(pc.to_string()));
            r.set(Attr::Email, Some(email.to_string()));
            b.push(0, i.to_string(), r);
        }
        b.finish()
    }

    fn spec(name: &str, keys: &[&str]) -> BlockSpec {
        BlockSpec {
            name: name.into(),
            keys: keys.iter().map(|k| KeyPart::parse(k).unwrap()).collect(),
            any_order: false,
        }
    }

    fn all_pairs(b: &Blocking) -> Vec<(u32, u32, usize)> {
        let mut out = Vec::new();
        for t in b.tasks() {
            b.for_each_pair(&t, |x, y| out.push((x, y, t.key)));
        }
        out
    }

    /// Five records and two keys (name + postcode prefix, then e-mail).
    fn two_keys() -> Blocking {
        let t = table(&[
            ("smith", "94110", "a@x.org"),
            ("smyth", "94117", "a@x.org"),
            ("jones", "10001", "b@x.org"),
            ("smith", "94123", "c@x.org"),
            ("johns", "10002", "b@x.org"),
        ]);
        let specs = [
            spec("name", &["soundex(family_name)", "prefix(postcode, 3)"]),
            spec("email", &["email"]),
        ];
        Blocking::build(&t, &specs, 1000).unwrap()
    }

    #[test]
    fn union_of_keys_without_repeats() {
        let b = two_keys();
        let pairs = all_pairs(&b);
        // soundex(smith)=soundex(smyth)=S530 (American Soundex), 941 prefix: (0,1), (0,3), (1,3)
        // jones J520 / johns J520, 100: (2,4). Email adds nothing new: (0,1) and (2,4) seen.
        let got: HashSet<(u32, u32)> = pairs.iter().map(|p| (p.0, p.1)).collect();
        assert_eq!(got, [(0, 1), (0, 3), (1, 3), (2, 4)].into_iter().collect());
        assert_eq!(pairs.len(), got.len(), "a pair was produced twice");
        assert!(pairs.iter().all(|p| p.2 == 0));
        assert_eq!(b.keys[1].raw_pairs(), 2);
    }

    #[test]
    fn plan_estimates_new_pairs_and_completeness() {
        let b = two_keys();
        // Truth: {0,1}, {2,4}, {3}.
        let p = plan(&b, Some(&[0, 0, 1, 2, 1]), 2);
        assert_eq!((p[0].raw_pairs, p[0].new_pairs), (4, 4));
        assert_eq!((p[1].raw_pairs, p[1].new_pairs), (2, 0));
        assert_eq!(p[0].largest[0].1, 3);
        assert_eq!(p[0].completeness, Some(1.0));
        assert_eq!(p[1].completeness, Some(1.0));
        assert_eq!(p[1].cumulative_completeness, Some(1.0));
        // The estimate equals the pairs actually enumerated when keys overlap pairwise.
        let enumerated = all_pairs(&b);
        assert_eq!(
            enumerated.iter().filter(|x| x.2 == 0).count() as u64,
            p[0].new_pairs
        );
        assert_eq!(
            enumerated.iter().filter(|x| x.2 == 1).count() as u64,
            p[1].new_pairs
        );
    }

    #[test]
    fn missing_parts_are_not_blocked() {
        let mut bld = RecordTableBuilder::new(vec!["s".into()]);
        for i in 0..3 {
            let mut r = StdRecord::default();
            if i < 2 {
                r.set(Attr::FamilyName, Some("lee".into()));
            }
            bld.push(0, i.to_string(), r);
        }
        let t = bld.finish();
        let b = Blocking::build(&t, &[spec("n", &["family_name"])], 10).unwrap();
        assert_eq!(b.keys[0].key_of[2], NO_KEY);
        assert_eq!(all_pairs(&b).len(), 1);
    }

    #[test]
    fn refuses_exploding_keys_and_names_them() {
        let rows: Vec<(&str, &str, &str)> = (0..50).map(|_| ("lee", "1", "x@y.org")).collect();
        let t = table(&rows);
        let err = Blocking::build(&t, &[spec("fam", &["family_name"])], 100).unwrap_err();
        let msg = err.to_string();
        assert!(
            msg.contains("`fam`") && msg.contains("1225") && msg.contains("`lee`"),
            "{msg}"
        );
        assert!(err.is_bad_input());
    }

    #[test]
    fn large_blocks_split_into_tasks_that_cover_every_pair_once() {
        let rows: Vec<(&str, &str, &str)> = (0..600).map(|_| ("lee", "1", "x@y.org")).collect();
        let t = table(&rows);
        let b = Blocking::build(&t, &[spec("fam", &["family_name"])], u64::MAX).unwrap();
        assert!(b.tasks().len() > 1);
        assert_eq!(all_pairs(&b).len() as u64, pairs_of(600));
    }

    #[test]
    fn key_functions() {
        // American Soundex of "Tymczak" is T522 (National Archives, "The Soundex Indexing System").
        assert_eq!(
            key_value("Tymczak", KeyFn::Soundex).as_deref(),
            Some("T522")
        );
        assert_eq!(key_value("müller", KeyFn::Soundex).as_deref(), Some("M460"));
        assert_eq!(
            key_value("sw1a 1aa", KeyFn::Prefix(4)).as_deref(),
            Some("sw1a")
        );
        assert_eq!(key_value("Elodie", KeyFn::Initial).as_deref(), Some("e"));
        assert_eq!(
            key_value("1984-02-03", KeyFn::Year).as_deref(),
            Some("1984")
        );
        assert_eq!(key_value("--", KeyFn::Soundex), None);
        // Other scripts: prefix and initial as written; Soundex has no code for them.
        assert_eq!(
            key_value("петров", KeyFn::Prefix(3)).as_deref(),
            Some("пет")
        );
        assert_eq!(key_value("Петров", KeyFn::Initial).as_deref(), Some("п"));
        assert_eq!(key_value("петров", KeyFn::Soundex), None);
        // A value mixing scripts: the Latin letters, folded, as in the comparison's
        // soundex level (compare::tests::soundex_level_agrees_with_the_blocking_key).
        assert_eq!(
            key_value("Ösen Иван", KeyFn::Soundex).as_deref(),
            Some("O250")
        );
    }

    #[test]
    fn any_order_keys_ignore_which_part_holds_which_value() {
        use crate::record::{RecordTableBuilder, StdRecord};
        // Invented names: records 0 and 1 have given and family name swapped.
        let rows = [
            (Some("mechthilde"), Some("lange")),
            (Some("lange"), Some("mechthilde")),
            (Some("mechthilde"), Some("lang")),
            (None, Some("mechthilde")),
        ];
        let mut b = RecordTableBuilder::new(vec!["s".into()]);
        for (i, (g, f)) in rows.iter().enumerate() {
            let mut r = StdRecord::default();
            r.set(Attr::GivenName, g.map(String::from));
            r.set(Attr::FamilyName, f.map(String::from));
            b.push(0, i.to_string(), r);
        }
        let t = b.finish();
        let mut s = spec("names", &["soundex(given_name)", "soundex(family_name)"]);
        let ordered = Blocking::build(&t, std::slice::from_ref(&s), u64::MAX).unwrap();
        assert_eq!(all_pairs(&ordered), vec![(0, 2, 0)]);
        s.any_order = true;
        let any = Blocking::build(&t, &[s], u64::MAX).unwrap();
        // Soundex (Russell 1918, as in the American Soundex rules): lange = lang = L520,
        // mechthilde = M234.
        assert_eq!(all_pairs(&any), vec![(0, 1, 0), (0, 2, 0), (1, 2, 0)]);
        // Display: the parts in the (deterministic) order of their first appearance.
        assert_eq!(any.keys[0].values[0], "M234|L520");
    }

    #[test]
    fn local_part_and_national_number_keys() {
        assert_eq!(
            key_value("ana.ruiz@mail.example", KeyFn::LocalPart).as_deref(),
            Some("ana.ruiz")
        );
        assert_eq!(key_value("no-at-sign", KeyFn::LocalPart), None);
        assert_eq!(key_value("@mail.example", KeyFn::LocalPart), None);
        // Country calling codes 33 (France) and 1 (NANP), ITU-T E.164 list.
        for v in ["+33612345678", "+33612345678?", "0612345678?"] {
            assert_eq!(
                key_value(v, KeyFn::National).as_deref(),
                Some("612345678"),
                "{v}"
            );
        }
        assert_eq!(
            key_value("+15814586944?", KeyFn::National).as_deref(),
            Some("5814586944")
        );
        assert_eq!(key_value("+33", KeyFn::National), None);
    }
}
