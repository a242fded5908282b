//! Key inheritance: the previous run's keys and this run's clusters in, each cluster's
//! customer key and the key events of the run out. A pure function; the store and the
//! refresh command feed it.
//!
//! The rules, in order:
//!
//! 1. **A key follows the largest part of its records.** For each previous key, count
//!    its records (those still present) in each new cluster; the key's *home* is the
//!    cluster holding most of them (ties: the cluster whose anchor record comes first).
//! 2. **Merges keep the oldest key.** A cluster that is the home of several keys keeps
//!    the oldest (created in the earliest run; ties: the smaller key text); each other
//!    key is retired with a `merged_into` event naming the survivor.
//! 3. **Splits keep the key on the largest part.** A cluster that is nobody's home but
//!    holds records of previous keys gets a new key with a `split_from` event naming the
//!    key it overlaps most (ties: the older key).
//! 4. **New customers get new keys** (`created`), from their anchor record.
//! 5. **A key none of whose records remain is retired** (`retired`). Records that left
//!    the sources simply leave the current crosswalk; their history stays in the store.
//!
//! New keys are never keys issued before (live or retired): the caller's `make_key`
//! is called with increasing salts until it yields an unused key.
//!
//! Consequences, checked by property tests below: unchanged clusters give zero events
//! and the same keys; running the same refresh twice changes nothing the second time;
//! no key is ever given to two customers at once or reused after it was retired.

use std::collections::{HashMap, HashSet};

/// A key of the previous run.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PrevKey {
    /// The key text.
    pub key: String,
    /// The run that created it (smaller = older).
    pub created_run: i64,
}

/// What happened to a key in a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum EventKind {
    /// A new customer.
    Created,
    /// The key's customer turned out to be another key's customer; the key is retired.
    MergedInto,
    /// A new key for a part split off another key's customer.
    SplitFrom,
    /// None of the key's records remain.
    Retired,
}

impl EventKind {
    /// The name written to the store and to exports.
    pub fn name(self) -> &'static str {
        match self {
            EventKind::Created => "created",
            EventKind::MergedInto => "merged_into",
            EventKind::SplitFrom => "split_from",
            EventKind::Retired => "retired",
        }
    }
}

/// A key event.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct KeyEvent {
    /// The key the event is about.
    pub key: String,
    /// What happened.
    pub kind: EventKind,
    /// The survivor (`MergedInto`) or the origin (`SplitFrom`).
    pub other: Option<String>,
    /// Records the key holds after the run (0 for merged and retired keys).
    pub records: usize,
}

/// The outcome of [`inherit`].
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Inherited {
    /// Per record of this run, its customer key.
    pub key_of_record: Vec<String>,
    /// Keys issued in this run (in the order they were made).
    pub new_keys: Vec<String>,
    /// Previous keys retired in this run (merged or gone).
    pub retired: Vec<String>,
    /// Events, sorted by key and kind.
    pub events: Vec<KeyEvent>,
}

/// Assign this run's keys.
///
/// - `prev_keys`: the live keys of the previous run.
/// - `prev_of`: per record of this run, the index in `prev_keys` of its previous key
///   (`None` for a record new in this run).
/// - `label`: per record, its cluster (any id shared by the members).
/// - `rank`: per record, its position in (source, id) order; a cluster's anchor is its
///   member of smallest rank.
/// - `issued`: is this key text taken (issued in any earlier run)?
/// - `make_key(record, salt)`: a candidate key for a new cluster anchored at `record`.
pub fn inherit(
    prev_keys: &[PrevKey],
    prev_of: &[Option<u32>],
    label: &[u32],
    rank: &[u32],
    issued: &dyn Fn(&str) -> bool,
    make_key: &dyn Fn(usize, u32) -> String,
) -> Inherited {
    let n = label.len();
    debug_assert_eq!(prev_of.len(), n);
    debug_assert_eq!(rank.len(), n);
    // Clusters in anchor order.
    let mut anchor: HashMap<u32, usize> = HashMap::new();
    let mut size: HashMap<u32, usize> = HashMap::new();
    for r in 0..n {
        let a = anchor.entry(label[r]).or_insert(r);
        if rank[r] < rank[*a] {
            *a = r;
        }
        *size.entry(label[r]).or_insert(0) += 1;
    }
    let mut clusters: Vec<u32> = anchor.keys().copied().collect();
    clusters.sort_by_key(|l| rank[anchor[l]]);
    let order: HashMap<u32, usize> = clusters.iter().enumerate().map(|(i, &l)| (l, i)).collect();

    // overlap[(key, cluster position)] = records of the key in that cluster.
    let mut overlap: HashMap<(u32, usize), usize> = HashMap::new();
    for r in 0..n {
        if let Some(k) = prev_of[r] {
            *overlap.entry((k, order[&label[r]])).or_insert(0) += 1;
        }
    }
    // Rule 1: each key's home.
    let mut home: HashMap<u32, (usize, usize)> = HashMap::new(); // key -> (count, cluster)
    for (&(k, c), &cnt) in &overlap {
        let e = home.entry(k).or_insert((cnt, c));
        if cnt > e.0 || (cnt == e.0 && c < e.1) {
            *e = (cnt, c);
        }
    }
    let older = |a: u32, b: u32| {
        let (ka, kb) = (&prev_keys[a as usize], &prev_keys[b as usize]);
        (ka.created_run, &ka.key) < (kb.created_run, &kb.key)
    };
    // Rule 2: claimants per cluster; the oldest wins.
    let mut claimants: Vec<Vec<u32>> = vec![Vec::new(); clusters.len()];
    let mut homed: Vec<u32> = home.keys().copied().collect();
    homed.sort_unstable();
    for k in homed {
        claimants[home[&k].1].push(k);
    }
    // Per cluster position: the keys overlapping it, to name the origin of a split.
    let mut overlapping: Vec<Vec<(u32, usize)>> = vec![Vec::new(); clusters.len()];
    for (&(k, c), &cnt) in &overlap {
        overlapping[c].push((k, cnt));
    }

    let previous: HashSet<&str> = prev_keys.iter().map(|p| p.key.as_str()).collect();
    let mut used: HashSet<String> = HashSet::new();
    let mut key_of_cluster: Vec<String> = Vec::with_capacity(clusters.len());
    let mut events = Vec::new();
    let mut new_keys = Vec::new();
    let mut retired = Vec::new();
    for (c, &l) in clusters.iter().enumerate() {
        let members = size[&l];
        if let Some(&winner) = claimants[c]
            .iter()
            .reduce(|a, b| if older(*b, *a) { b } else { a })
        {
            let survivor = prev_keys[winner as usize].key.clone();
            let mut losers: Vec<u32> = claimants[c]
                .iter()
                .copied()
                .filter(|&k| k != winner)
                .collect();
            losers.sort_by(|a, b| prev_keys[*a as usize].key.cmp(&prev_keys[*b as usize].key));
            for k in losers {
                let key = prev_keys[k as usize].key.clone();
                retired.push(key.clone());
                events.push(KeyEvent {
                    key,
                    kind: EventKind::MergedInto,
                    other: Some(survivor.clone()),
                    records: 0,
                });
            }
            used.insert(survivor.clone());
            key_of_cluster.push(survivor);
            continue;
        }
        // A new key for this cluster.
        let a = anchor[&l];
        let mut salt = 0u32;
        let key = loop {
            let k = make_key(a, salt);
            if !issued(&k) && !used.contains(&k) && !previous.contains(k.as_str()) {
                break k;
            }
            salt += 1;
        };
        used.insert(key.clone());
        new_keys.push(key.clone());
        let origin = overlapping[c]
            .iter()
            .copied()
            .reduce(|x, y| {
                if y.1 > x.1 || (y.1 == x.1 && older(y.0, x.0)) {
                    y
                } else {
                    x
                }
            })
            .map(|(k, _)| prev_keys[k as usize].key.clone());
        events.push(KeyEvent {
            key: key.clone(),
            kind: if origin.is_some() {
                EventKind::SplitFrom
            } else {
                EventKind::Created
            },
            other: origin,
            records: members,
        });
        key_of_cluster.push(key);
    }
    // Rule 5: keys with no record left.
    for (k, p) in prev_keys.iter().enumerate() {
        if !home.contains_key(&(k as u32)) {
            retired.push(p.key.clone());
            events.push(KeyEvent {
                key: p.key.clone(),
                kind: EventKind::Retired,
                other: None,
                records: 0,
            });
        }
    }
    events.sort();
    let key_of_record = label
        .iter()
        .map(|l| key_of_cluster[order[l]].clone())
        .collect();
    Inherited {
        key_of_record,
        new_keys,
        retired,
        events,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn mk(r: usize, salt: u32) -> String {
        format!("K{r}-{salt}")
    }

    /// Run a refresh from `prev` (per record of this run: previous key text) with
    /// `label`, ranks in record order, given all previously issued keys.
    fn run(
        prev: &[Option<&str>],
        created: &[(&str, i64)],
        label: &[u32],
        issued: &[&str],
    ) -> Inherited {
        let prev_keys: Vec<PrevKey> = created
            .iter()
            .map(|(k, r)| PrevKey {
                key: k.to_string(),
                created_run: *r,
            })
            .collect();
        let prev_of: Vec<Option<u32>> = prev
            .iter()
            .map(|p| p.map(|k| prev_keys.iter().position(|x| x.key == k).unwrap() as u32))
            .collect();
        let rank: Vec<u32> = (0..label.len() as u32).collect();
        let issued: HashSet<String> = issued.iter().map(|s| s.to_string()).collect();
        inherit(
            &prev_keys,
            &prev_of,
            label,
            &rank,
            &|k| issued.contains(k),
            &mk,
        )
    }

    fn ev(key: &str, kind: EventKind, other: Option<&str>, records: usize) -> KeyEvent {
        KeyEvent {
            key: key.into(),
            kind,
            other: other.map(Into::into),
            records,
        }
    }

    #[test]
    fn first_run_creates_one_key_per_cluster() {
        let r = run(&[None, None, None], &[], &[0, 0, 2], &[]);
        assert_eq!(r.key_of_record, ["K0-0", "K0-0", "K2-0"]);
        assert_eq!(
            r.events,
            [
                ev("K0-0", EventKind::Created, None, 2),
                ev("K2-0", EventKind::Created, None, 1)
            ]
        );
    }

    #[test]
    fn merge_keeps_the_older_key_even_when_it_is_smaller() {
        // B (run 1, 1 record) and A (run 2, 2 records) merge: B is older and survives.
        let r = run(
            &[Some("A"), Some("A"), Some("B")],
            &[("A", 2), ("B", 1)],
            &[0, 0, 0],
            &["A", "B"],
        );
        assert_eq!(r.key_of_record, ["B", "B", "B"]);
        assert_eq!(r.events, [ev("A", EventKind::MergedInto, Some("B"), 0)]);
        assert_eq!(r.retired, ["A"]);
        // Same age: the smaller key text survives.
        let r = run(
            &[Some("Y"), Some("X")],
            &[("Y", 1), ("X", 1)],
            &[5, 5],
            &["X", "Y"],
        );
        assert_eq!(r.key_of_record, ["X", "X"]);
    }

    #[test]
    fn split_keeps_the_key_on_the_largest_part() {
        let r = run(
            &[Some("A"), Some("A"), Some("A"), None],
            &[("A", 1)],
            &[0, 1, 1, 1],
            &["A"],
        );
        // Part {1,2,3} holds two of A's records, part {0} one: the larger part keeps A.
        assert_eq!(r.key_of_record, ["K0-0", "A", "A", "A"]);
        assert_eq!(r.events, [ev("K0-0", EventKind::SplitFrom, Some("A"), 1)]);
        assert_eq!(r.new_keys, ["K0-0"]);
    }

    #[test]
    fn gone_keys_retire_and_new_keys_skip_issued_ones() {
        // The only record of B is gone; a new customer's first candidate key was issued
        // before (to a key retired long ago), so it gets the next one.
        let r = run(
            &[Some("A"), None],
            &[("A", 1), ("B", 1)],
            &[0, 1],
            &["A", "B", "K1-0"],
        );
        assert_eq!(r.key_of_record, ["A", "K1-1"]);
        assert_eq!(
            r.events,
            [
                ev("B", EventKind::Retired, None, 0),
                ev("K1-1", EventKind::Created, None, 1)
            ]
        );
    }

    /// A random refresh: `n` records, some with a previous key.
    fn scenario() -> impl Strategy<Value = (Vec<Option<u32>>, Vec<u32>, Vec<u32>)> {
        (1usize..40).prop_flat_map(|n| {
            (
                proptest::collection::vec(proptest::option::weighted(0.8, 0u32..8), n),
                proptest::collection::vec(0u32..10, n),
                Just((0..n as u32).collect::<Vec<u32>>()),
            )
        })
    }

    fn keys_for(prev_of: &[Option<u32>]) -> Vec<PrevKey> {
        let max = prev_of.iter().flatten().max().map_or(0, |m| m + 1);
        (0..max)
            .map(|k| PrevKey {
                key: format!("P{k}"),
                created_run: i64::from(k % 3),
            })
            .collect()
    }

    fn refresh_from(
        prev_keys: &[PrevKey],
        prev_of: &[Option<u32>],
        label: &[u32],
        rank: &[u32],
        issued: &HashSet<String>,
    ) -> Inherited {
        inherit(
            prev_keys,
            prev_of,
            label,
            rank,
            &|k| issued.contains(k),
            &mk,
        )
    }

    /// The state after a run: live keys and each record's key index.
    fn state_after(r: &Inherited, prev: &[PrevKey]) -> (Vec<PrevKey>, Vec<Option<u32>>) {
        let mut live: Vec<String> = r.key_of_record.clone();
        live.sort();
        live.dedup();
        let keys: Vec<PrevKey> = live
            .iter()
            .map(|k| PrevKey {
                key: k.clone(),
                created_run: prev
                    .iter()
                    .find(|p| &p.key == k)
                    .map_or(9, |p| p.created_run),
            })
            .collect();
        let of = r
            .key_of_record
            .iter()
            .map(|k| Some(keys.iter().position(|p| &p.key == k).unwrap() as u32))
            .collect();
        (keys, of)
    }

    proptest! {
        #[test]
        fn unchanged_clusters_give_no_events_and_the_same_keys(
            (prev_of, label, rank) in scenario()
        ) {
            let prev_keys = keys_for(&prev_of);
            let issued: HashSet<String> = prev_keys.iter().map(|p| p.key.clone()).collect();
            let first = refresh_from(&prev_keys, &prev_of, &label, &rank, &issued);
            // Refresh again with the outcome as the previous state and the same clusters.
            let mut issued2 = issued.clone();
            issued2.extend(first.new_keys.iter().cloned());
            let (keys2, of2) = state_after(&first, &prev_keys);
            let second = refresh_from(&keys2, &of2, &label, &rank, &issued2);
            prop_assert!(second.events.is_empty(), "{:?}", second.events);
            prop_assert_eq!(&second.key_of_record, &first.key_of_record);
            prop_assert!(second.new_keys.is_empty() && second.retired.is_empty());
        }

        #[test]
        fn keys_are_never_shared_or_reused(
            (prev_of, label, rank) in scenario()
        ) {
            let prev_keys = keys_for(&prev_of);
            // Retired keys of earlier runs are issued too.
            let mut issued: HashSet<String> = prev_keys.iter().map(|p| p.key.clone()).collect();
            issued.extend((0..40).map(|r| mk(r, 0)).filter(|_| rank.len() % 2 == 0));
            let r = refresh_from(&prev_keys, &prev_of, &label, &rank, &issued);
            // One key per cluster, one cluster per key.
            let mut by_label: HashMap<u32, &str> = HashMap::new();
            let mut by_key: HashMap<&str, u32> = HashMap::new();
            for (i, k) in r.key_of_record.iter().enumerate() {
                prop_assert_eq!(*by_label.entry(label[i]).or_insert(k), k.as_str());
                prop_assert_eq!(*by_key.entry(k.as_str()).or_insert(label[i]), label[i]);
            }
            for k in &r.new_keys {
                prop_assert!(!issued.contains(k), "reused {}", k);
            }
            // Every previous key is either live after the run or retired, never both.
            for p in &prev_keys {
                let live = by_key.contains_key(p.key.as_str());
                let gone = r.retired.contains(&p.key);
                prop_assert!(live != gone, "{} live {} retired {}", p.key, live, gone);
            }
            // Every cluster without a surviving previous key has a created/split event.
            let created: HashSet<&str> = r.events.iter()
                .filter(|e| matches!(e.kind, EventKind::Created | EventKind::SplitFrom))
                .map(|e| e.key.as_str()).collect();
            let fresh: HashSet<&str> = r.new_keys.iter().map(String::as_str).collect();
            prop_assert_eq!(created, fresh);
        }

        #[test]
        fn a_key_stays_with_the_largest_part_of_its_records(
            (prev_of, label, rank) in scenario()
        ) {
            let prev_keys = keys_for(&prev_of);
            let issued: HashSet<String> = prev_keys.iter().map(|p| p.key.clone()).collect();
            let r = refresh_from(&prev_keys, &prev_of, &label, &rank, &issued);
            for (k, p) in prev_keys.iter().enumerate() {
                let mut per_cluster: HashMap<u32, usize> = HashMap::new();
                for i in 0..label.len() {
                    if prev_of[i] == Some(k as u32) {
                        *per_cluster.entry(label[i]).or_insert(0) += 1;
                    }
                }
                let Some(&best) = per_cluster.values().max() else { continue };
                // If the key survived, it sits on a cluster with `best` of its records.
                if let Some(i) = r.key_of_record.iter().position(|x| x == &p.key) {
                    prop_assert_eq!(per_cluster.get(&label[i]).copied(), Some(best));
                }
            }
        }
    }
}
