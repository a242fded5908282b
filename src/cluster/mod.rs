//! Cluster: matched pairs in, a partition of the records into customers out.
//!
//! Matched pairs are merged with union-find in descending order of their log2 odds,
//! `prior + evidence` (the number the decision was made from; ties broken by record
//! indexes), so the result does not depend on the order the pairs arrive in or on the
//! thread count. Evidence alone would misorder pairs found by blocking keys with
//! different priors: strong evidence on a key whose pairs are rarely the same customer
//! can be a weaker case than moderate evidence on a key whose pairs usually are. Guards can refuse a merge: a maximum cluster size, "at most one
//! record per source" for sources known to be free of duplicates, and cannot-links from
//! attributes declared unique per person (two different non-empty values). A refused merge is
//! recorded so that a person can look at it. Without guards this is plain transitive
//! closure.

use crate::compare::{Comparator, Comparison};
use crate::record::RecordTable;
use crate::spec::Spec;

/// Rules a merge must not break.
#[derive(Debug, Clone, Default)]
pub struct Guards {
    /// Largest allowed cluster (records); `None` for no limit.
    pub max_size: Option<usize>,
    /// Per source index, true when the source holds at most one record per customer.
    pub one_per_source: Vec<bool>,
    /// Attributes unique per person (e.g. a national id): per attribute, the value id of
    /// each record (0 = missing). Two clusters with conflicting values are never merged;
    /// a cluster keeps the value of its first record that has one.
    pub distinct: Vec<Vec<u32>>,
}

/// A matched pair offered to the clustering.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Edge {
    /// First record.
    pub a: u32,
    /// Second record.
    pub b: u32,
    /// The pair's evidence (sum of its bits).
    pub evidence: f64,
    /// The pair's prior (log2 prior odds of the fit that scored it).
    pub prior: f64,
}

impl Edge {
    /// Posterior log2 odds, `prior + evidence`: edges with more merge first.
    pub fn log2_odds(&self) -> f64 {
        self.prior + self.evidence
    }
}

/// Why a merge was refused.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Refusal {
    /// The merged cluster would exceed the maximum size.
    TooLarge,
    /// Both clusters hold a record of a source that allows one record per customer.
    SameSource,
    /// The clusters hold different values of an attribute declared unique per person;
    /// the number is the attribute's position in [`Guards::distinct`].
    Conflict(usize),
}

impl Refusal {
    /// A short reason for output files.
    pub fn reason(self, distinct_names: &[String]) -> String {
        match self {
            Refusal::TooLarge => "cluster would exceed the maximum size".into(),
            Refusal::SameSource => "two records of a source with one record per customer".into(),
            Refusal::Conflict(k) => format!(
                "different values of `{}`, declared unique per customer",
                distinct_names.get(k).map_or("?", |s| s.as_str())
            ),
        }
    }
}

/// The outcome of clustering.
#[derive(Debug, Clone)]
pub struct Clusters {
    /// Per record, its cluster's representative: the smallest record index in it.
    pub label: Vec<u32>,
    /// Edges that were refused, with the reason, in the order they were tried.
    pub refused: Vec<(Edge, Refusal)>,
}

impl Clusters {
    /// Number of clusters.
    pub fn count(&self) -> usize {
        self.label
            .iter()
            .enumerate()
            .filter(|(i, &l)| *i as u32 == l)
            .count()
    }
}

struct UnionFind {
    parent: Vec<u32>,
    size: Vec<u32>,
    /// Bit `s` set when the cluster holds a record of guarded source `s` (first 64).
    sources: Vec<u64>,
    /// Per distinct attribute, the value the cluster holds (0 = none yet).
    values: Vec<Vec<u32>>,
}

impl UnionFind {
    fn find(&mut self, mut x: u32) -> u32 {
        while self.parent[x as usize] != x {
            let p = self.parent[x as usize];
            self.parent[x as usize] = self.parent[p as usize];
            x = p;
        }
        x
    }
}

/// The guards the spec's `[cluster]` section asks for, over `table`'s records.
pub fn guards_of(spec: &Spec, table: &RecordTable) -> Guards {
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

/// The spec's guards with their compatibility rule: a unique attribute that is also
/// compared conflicts only when its values reach no agreement level (so a birth date
/// with day and month swapped does not block a merge); one that is not compared
/// conflicts when the values differ.
pub struct SpecGuards<'a> {
    /// The guards.
    pub guards: Guards,
    /// Per unique attribute, its comparator if the attribute is compared.
    comparators: Vec<Option<&'a Comparator>>,
    /// Names of the unique attributes (for refusal reasons).
    pub unique_names: Vec<String>,
}

impl<'a> SpecGuards<'a> {
    /// The guards of `spec` over `table`, with `comparison`'s comparators.
    pub fn new(spec: &Spec, table: &RecordTable, comparison: &'a Comparison) -> SpecGuards<'a> {
        SpecGuards {
            guards: guards_of(spec, table),
            comparators: spec
                .cluster
                .unique
                .iter()
                .map(|a| comparison.comparators.iter().find(|c| c.attr == *a))
                .collect(),
            unique_names: spec
                .cluster
                .unique
                .iter()
                .map(|a| a.name().to_string())
                .collect(),
        }
    }

    /// May values `x` and `y` of unique attribute `k` belong to one person?
    pub fn compatible(&self, k: usize, x: u32, y: u32) -> bool {
        match self.comparators[k] {
            Some(c) => c.level(x, y) != c.disagree(),
            None => x == y,
        }
    }

    /// Cluster `table`'s records from matched `edges` under these guards.
    pub fn cluster(&self, table: &RecordTable, edges: &[Edge]) -> Clusters {
        cluster_with(
            table.len(),
            edges,
            &table.source,
            &self.guards,
            &|k, x, y| self.compatible(k, x, y),
        )
    }

    /// Would a guard refuse to merge records `a` and `b` on their own (as two
    /// one-record clusters)? The size limit is not checked here: it depends on the
    /// clusters the records are in.
    pub fn refuses_pair(&self, table: &RecordTable, a: u32, b: u32) -> Option<Refusal> {
        let (sa, sb) = (table.source[a as usize], table.source[b as usize]);
        if sa == sb
            && self
                .guards
                .one_per_source
                .get(sa as usize)
                .copied()
                .unwrap_or(false)
        {
            return Some(Refusal::SameSource);
        }
        for (k, ids) in self.guards.distinct.iter().enumerate() {
            let (x, y) = (ids[a as usize], ids[b as usize]);
            if x != 0 && y != 0 && !self.compatible(k, x, y) {
                return Some(Refusal::Conflict(k));
            }
        }
        None
    }
}

/// Cluster `n` records from matched `edges`; `source_of` gives each record's source index.
/// Values of a unique attribute conflict when they differ.
pub fn cluster(n: usize, edges: &[Edge], source_of: &[u16], guards: &Guards) -> Clusters {
    cluster_with(n, edges, source_of, guards, &|_, x, y| x == y)
}

/// [`cluster`] where `compatible(k, x, y)` says whether values `x` and `y` of unique
/// attribute `k` may belong to one person (e.g. birth dates one typo apart).
pub fn cluster_with(
    n: usize,
    edges: &[Edge],
    source_of: &[u16],
    guards: &Guards,
    compatible: &dyn Fn(usize, u32, u32) -> bool,
) -> Clusters {
    let mut order: Vec<usize> = (0..edges.len()).collect();
    order.sort_by(|&x, &y| {
        let (e, f) = (&edges[x], &edges[y]);
        f.log2_odds()
            .total_cmp(&e.log2_odds())
            .then(e.a.min(e.b).cmp(&f.a.min(f.b)))
            .then(e.a.max(e.b).cmp(&f.a.max(f.b)))
    });
    let guarded = |s: u16| {
        guards
            .one_per_source
            .get(s as usize)
            .copied()
            .unwrap_or(false)
            && s < 64
    };
    let mut uf = UnionFind {
        parent: (0..n as u32).collect(),
        size: vec![1; n],
        sources: (0..n)
            .map(|r| {
                let s = source_of[r];
                if guarded(s) {
                    1u64 << s
                } else {
                    0
                }
            })
            .collect(),
        values: guards.distinct.clone(),
    };
    let mut refused = Vec::new();
    for &i in &order {
        let e = edges[i];
        let (ra, rb) = (uf.find(e.a), uf.find(e.b));
        if ra == rb {
            continue;
        }
        let size = uf.size[ra as usize] + uf.size[rb as usize];
        if guards.max_size.is_some_and(|m| size as usize > m) {
            refused.push((e, Refusal::TooLarge));
            continue;
        }
        if uf.sources[ra as usize] & uf.sources[rb as usize] != 0 {
            refused.push((e, Refusal::SameSource));
            continue;
        }
        if let Some(k) = uf.values.iter().enumerate().position(|(k, v)| {
            let (x, y) = (v[ra as usize], v[rb as usize]);
            x != 0 && y != 0 && x != y && !compatible(k, x, y)
        }) {
            refused.push((e, Refusal::Conflict(k)));
            continue;
        }
        // Union by size; the representative is fixed afterwards.
        let (big, small) = if uf.size[ra as usize] >= uf.size[rb as usize] {
            (ra, rb)
        } else {
            (rb, ra)
        };
        uf.parent[small as usize] = big;
        uf.size[big as usize] = size;
        uf.sources[big as usize] |= uf.sources[small as usize];
        for v in uf.values.iter_mut() {
            if v[big as usize] == 0 {
                v[big as usize] = v[small as usize];
            }
        }
    }
    // Label = smallest record index of the cluster.
    let mut smallest = vec![u32::MAX; n];
    let roots: Vec<u32> = (0..n as u32).map(|r| uf.find(r)).collect();
    for (r, &root) in roots.iter().enumerate() {
        let s = &mut smallest[root as usize];
        *s = (*s).min(r as u32);
    }
    let label = roots.iter().map(|&root| smallest[root as usize]).collect();
    Clusters { label, refused }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn e(a: u32, b: u32, evidence: f64) -> Edge {
        Edge {
            a,
            b,
            evidence,
            prior: 0.0,
        }
    }

    #[test]
    fn edges_merge_in_order_of_log2_odds_not_evidence() {
        // Records 0 and 2 are from a source with one record per customer, so record 1
        // joins one of them. Edge 0-1 has more evidence (12 bits) but was found by a
        // blocking key whose pairs are rarely the same customer (prior -10 bits: 2 bits
        // of log2 odds); edge 1-2 has less evidence (9 bits) on a key with prior -3
        // bits (6 bits of log2 odds). The stronger case, 1-2, must win.
        let edges = [
            Edge {
                a: 0,
                b: 1,
                evidence: 12.0,
                prior: -10.0,
            },
            Edge {
                a: 1,
                b: 2,
                evidence: 9.0,
                prior: -3.0,
            },
        ];
        let g = Guards {
            one_per_source: vec![true, false],
            ..Default::default()
        };
        let c = cluster(3, &edges, &[0, 1, 0], &g);
        assert_eq!(c.label, vec![0, 1, 1]);
        assert_eq!(c.refused, vec![(edges[0], Refusal::SameSource)]);
        // Ordered by evidence alone, 0-1 would have merged first and 1-2 been refused.
        let by_evidence: Vec<Edge> = edges.iter().map(|x| Edge { prior: 0.0, ..*x }).collect();
        let c = cluster(3, &by_evidence, &[0, 1, 0], &g);
        assert_eq!(c.label, vec![0, 0, 2]);
    }

    #[test]
    fn transitive_closure_without_guards() {
        let c = cluster(
            6,
            &[e(0, 1, 5.0), e(1, 2, 3.0), e(4, 5, 9.0)],
            &[0; 6],
            &Guards::default(),
        );
        assert_eq!(c.label, vec![0, 0, 0, 3, 4, 4]);
        assert_eq!(c.count(), 3);
        assert!(c.refused.is_empty());
    }

    #[test]
    fn guards_refuse_weak_bridges() {
        // Two strong pairs bridged by a weak edge; max size 2 refuses the bridge.
        let edges = [e(0, 1, 20.0), e(2, 3, 20.0), e(1, 2, 4.0)];
        let g = Guards {
            max_size: Some(2),
            ..Default::default()
        };
        let c = cluster(4, &edges, &[0; 4], &g);
        assert_eq!(c.label, vec![0, 0, 2, 2]);
        assert_eq!(c.refused, vec![(edges[2], Refusal::TooLarge)]);
        // One record per source 0: records 0 and 2 are both from source 0.
        let g = Guards {
            one_per_source: vec![true, false],
            ..Default::default()
        };
        let c = cluster(4, &edges, &[0, 1, 0, 1], &g);
        assert_eq!(c.label, vec![0, 0, 2, 2]);
        assert_eq!(c.refused[0].1, Refusal::SameSource);
        // A unique attribute: records 0 and 3 carry different national ids (1 and 2);
        // record 1 and 2 carry none. The chain 0-1-2-3 must not join 0 with 3.
        let edges = [e(0, 1, 20.0), e(1, 2, 18.0), e(2, 3, 16.0)];
        let g = Guards {
            distinct: vec![vec![1, 0, 0, 2]],
            ..Default::default()
        };
        let c = cluster(4, &edges, &[0; 4], &g);
        assert_eq!(c.label, vec![0, 0, 0, 3]);
        assert_eq!(c.refused, vec![(edges[2], Refusal::Conflict(0))]);
        // Values 1 and 2 declared compatible (e.g. one typo apart): no refusal.
        let c = cluster_with(4, &edges, &[0; 4], &g, &|_, x, y| x + y == 3);
        assert_eq!(c.label, vec![0, 0, 0, 0]);
        assert!(c.refused.is_empty());
    }

    proptest! {
        #[test]
        fn partition_is_independent_of_edge_order(
            raw in proptest::collection::vec((0u32..30, 0u32..30, 0u32..5), 0..60),
            max in 1usize..8,
            seed in any::<u64>(),
        ) {
            let edges: Vec<Edge> = raw.iter().map(|&(a, b, w)| e(a, b, w as f64)).collect();
            let sources: Vec<u16> = (0..30).map(|r| (r % 3) as u16).collect();
            let ids: Vec<u32> = (0..30u32).map(|r| if r % 4 == 0 { r % 3 + 1 } else { 0 }).collect();
            let g = Guards {
                max_size: Some(max),
                one_per_source: vec![true, false, false],
                distinct: vec![ids.clone()],
            };
            let c1 = cluster(30, &edges, &sources, &g);
            let mut shuffled = edges.clone();
            let mut rng = crate::util::Rng::new(seed);
            for i in (1..shuffled.len()).rev() {
                let j = rng.below(i as u64 + 1) as usize;
                shuffled.swap(i, j);
                let s = &mut shuffled[i];
                std::mem::swap(&mut s.a, &mut s.b);
            }
            let c2 = cluster(30, &shuffled, &sources, &g);
            prop_assert_eq!(&c1.label, &c2.label);
            // Guards hold: size and one record of source 0 per cluster.
            let mut size = std::collections::HashMap::new();
            let mut src0 = std::collections::HashMap::new();
            for (r, &l) in c1.label.iter().enumerate() {
                *size.entry(l).or_insert(0usize) += 1;
                if sources[r] == 0 {
                    *src0.entry(l).or_insert(0usize) += 1;
                }
                prop_assert!(c1.label[l as usize] == l && l as usize <= r);
            }
            prop_assert!(size.values().all(|&s| s <= max));
            prop_assert!(src0.values().all(|&s| s <= 1));
            let mut seen: std::collections::HashMap<u32, u32> = std::collections::HashMap::new();
            for (r, &l) in c1.label.iter().enumerate() {
                if ids[r] != 0 {
                    let v = *seen.entry(l).or_insert(ids[r]);
                    prop_assert_eq!(v, ids[r], "cluster holds two unique values");
                }
            }
        }
    }
}
