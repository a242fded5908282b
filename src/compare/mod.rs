//! Compare: pairs of records in, agreement levels per attribute out.
//!
//! For each compared attribute a [`Comparator`] holds the spec's levels (best first) and,
//! per distinct value of the attribute's interned column, what the levels need: the
//! ASCII-folded string, transliteration variants, Soundex code, parsed date. A pair of
//! records becomes a comparison vector: one level code per attribute, where codes
//! `0..levels` are the spec's levels, `levels` is "disagree" and [`MISSING_LEVEL`] means
//! one side has no value (neutral in the weight).
//!
//! Results for value pairs that recur (the same two family names in many record pairs)
//! are kept in a small per-thread [`LevelCache`], so each is computed about once.

use std::collections::HashMap;

use crate::record::{Attr, Column, RecordTable, ValueId, MISSING};
use crate::standardize::{fold_for_comparison, nickname_equivalent, translit_variants};

mod level;
pub mod strings;

pub use level::{CompareSpec, Level, LEVEL_HELP, MAX_DECLARED_LEVELS, MISSING_LEVEL};

/// Most attributes a spec may compare (the size of a comparison vector).
pub const MAX_ATTRS: usize = 16;

/// A comparison vector: one level code per compared attribute.
pub type Gamma = [u8; MAX_ATTRS];

/// Compares one attribute of two records.
#[derive(Debug, Clone)]
pub struct Comparator {
    /// The attribute.
    pub attr: Attr,
    /// Levels, best first.
    pub levels: Vec<Level>,
    /// Level names including `disagree`.
    pub names: Vec<String>,
    folded: Vec<String>,
    translit: Vec<Vec<u32>>,
    soundex: Vec<u32>,
    dates: Vec<Option<(u16, u8, u8)>>,
    /// Per value, its words as ids (for `subset`), sorted and without repeats.
    words: Vec<Vec<u32>>,
    /// Phones: per value, whether it is valid by the numbering plan (for `verified`).
    verified: Vec<bool>,
    /// Phones: per value, an id of its national significant number (for
    /// `national_number`); `u32::MAX` when it has none.
    national: Vec<u32>,
    /// The `swapped` level, when the spec lists it and the partner column is attached.
    swap: Option<Swap>,
    equal_level: u8,
    /// Equal values are not always the best level (`verified` needs a valid number):
    /// run equal values through the levels too.
    equal_by_levels: bool,
    cached: bool,
}

/// What the `swapped` level needs: the other name attribute, and every value of both
/// columns mapped to one id space by its compared form.
#[derive(Debug, Clone)]
struct Swap {
    level: u8,
    partner: Attr,
    own: Vec<u32>,
    other: Vec<u32>,
}

impl Comparator {
    /// Prepare the comparator for `spec` over the interned `column`.
    pub fn new(spec: &CompareSpec, column: &Column) -> Comparator {
        let has = |f: fn(&Level) -> bool| spec.levels.iter().any(f);
        let folded: Vec<String> = column.dict.iter().map(|v| fold_for_comparison(v)).collect();
        let translit = if has(|l| *l == Level::Translit) {
            let mut ids: HashMap<String, u32> = HashMap::new();
            column
                .dict
                .iter()
                .map(|v| {
                    let mut vs: Vec<u32> = translit_variants(v)
                        .into_iter()
                        .map(|s| {
                            let n = ids.len() as u32;
                            *ids.entry(s).or_insert(n)
                        })
                        .collect();
                    vs.sort_unstable();
                    vs.dedup();
                    vs
                })
                .collect()
        } else {
            Vec::new()
        };
        let soundex = if has(|l| *l == Level::Soundex) {
            let mut ids: HashMap<String, u32> = HashMap::new();
            column
                .dict
                .iter()
                .map(|v| match strings::soundex_of_value(v) {
                    None => u32::MAX,
                    Some(code) => {
                        let n = ids.len() as u32;
                        *ids.entry(code).or_insert(n)
                    }
                })
                .collect()
        } else {
            Vec::new()
        };
        let dates = if spec.attr == Attr::BirthDate {
            column.dict.iter().map(|v| parse_date_value(v)).collect()
        } else {
            Vec::new()
        };
        let words = if has(|l| *l == Level::Subset) {
            let mut ids: HashMap<&str, u32> = HashMap::new();
            folded
                .iter()
                .map(|f| {
                    let mut v: Vec<u32> = tokens(f)
                        .map(|t| {
                            let n = ids.len() as u32;
                            *ids.entry(t).or_insert(n)
                        })
                        .collect();
                    v.sort_unstable();
                    v.dedup();
                    v
                })
                .collect()
        } else {
            Vec::new()
        };
        let verified = if has(|l| *l == Level::Verified) {
            column.dict.iter().map(|v| phone_is_verified(v)).collect()
        } else {
            Vec::new()
        };
        let national = if has(|l| *l == Level::NationalNumber) {
            let mut ids: HashMap<String, u32> = HashMap::new();
            column
                .dict
                .iter()
                .map(|v| match national_significant_number(v) {
                    Some(n) => {
                        let next = ids.len() as u32;
                        *ids.entry(n).or_insert(next)
                    }
                    None => u32::MAX,
                })
                .collect()
        } else {
            Vec::new()
        };
        let equal_level = spec
            .levels
            .iter()
            .position(|l| {
                !matches!(
                    l,
                    Level::DateSwap
                        | Level::DateOneDigit
                        | Level::Initial
                        | Level::Swapped
                        | Level::Subset
                        | Level::NationalNumber
                )
            })
            .unwrap_or(spec.levels.len()) as u8;
        let equal_by_levels = has(|l| *l == Level::Verified)
            || (spec.attr == Attr::BirthDate && has(|l| *l == Level::Partial));
        let cached = has(|l| {
            matches!(
                l,
                Level::JaroWinkler(_)
                    | Level::Jaro(_)
                    | Level::Levenshtein(_)
                    | Level::Nickname
                    | Level::MongeElkan(_)
                    | Level::AnyToken
                    | Level::Subset
            )
        });
        Comparator {
            attr: spec.attr,
            levels: spec.levels.clone(),
            names: spec.level_names(),
            folded,
            translit,
            soundex,
            dates,
            words,
            verified,
            national,
            swap: None,
            equal_level,
            equal_by_levels,
            cached,
        }
    }

    /// Prepare the `swapped` level (when the spec lists it) with the other name
    /// attribute's column: given_name pairs with family_name and the other way round.
    pub fn attach_partner(&mut self, table: &RecordTable) {
        let Some(level) = self.levels.iter().position(|l| *l == Level::Swapped) else {
            return;
        };
        let partner = match self.attr {
            Attr::GivenName => Attr::FamilyName,
            Attr::FamilyName => Attr::GivenName,
            _ => return,
        };
        let mut ids: HashMap<String, u32> = HashMap::new();
        let mut id_of = |f: &str| -> u32 {
            let n = ids.len() as u32;
            *ids.entry(f.to_string()).or_insert(n)
        };
        let other_folded: Vec<String> = table
            .column(partner)
            .dict
            .iter()
            .map(|v| fold_for_comparison(v))
            .collect();
        let own: Vec<u32> = self.folded.iter().map(|f| id_of(f)).collect();
        let other: Vec<u32> = other_folded.iter().map(|f| id_of(f)).collect();
        self.swap = Some(Swap {
            level: level as u8,
            partner,
            own,
            other,
        });
    }

    /// The `swapped` level's test for one pair of records, given both records' values
    /// of this attribute (`a`, `b`, both present and distinct) and of the partner
    /// attribute (`pa`, `pb`, possibly missing): each side's value is the other side's
    /// partner value; a side without a partner value (a one-word name) needs only its
    /// own value to be the other side's partner value.
    #[inline]
    fn swapped(swap: &Swap, a: ValueId, b: ValueId, pa: ValueId, pb: ValueId) -> bool {
        let cross = |x: ValueId, px: ValueId| {
            px != MISSING && swap.own[x as usize] == swap.other[px as usize]
        };
        match (pa == MISSING, pb == MISSING) {
            (false, false) => cross(a, pb) && cross(b, pa),
            (true, false) => cross(a, pb),
            (false, true) => cross(b, pa),
            (true, true) => false,
        }
    }

    /// Number of levels including `disagree`.
    pub fn n_levels(&self) -> usize {
        self.levels.len() + 1
    }

    /// The code of `disagree`.
    pub fn disagree(&self) -> u8 {
        self.levels.len() as u8
    }

    /// Name of a level code (`missing` for [`MISSING_LEVEL`]).
    pub fn level_name(&self, code: u8) -> &str {
        if code == MISSING_LEVEL {
            "missing"
        } else {
            &self.names[code as usize]
        }
    }

    /// The level of two value ids of this comparator's column.
    #[inline]
    pub fn level(&self, a: ValueId, b: ValueId) -> u8 {
        if a == MISSING || b == MISSING {
            MISSING_LEVEL
        } else if a == b && !self.equal_by_levels {
            self.equal_level
        } else {
            self.level_of_distinct(a, b)
        }
    }

    /// The level of two records' values given also their values of the partner
    /// attribute (for the `swapped` level; the plain level without it).
    #[inline]
    pub fn level_with_partner(
        &self,
        a: ValueId,
        b: ValueId,
        partners: Option<(ValueId, ValueId)>,
        cache: &mut LevelCache,
    ) -> u8 {
        let l = self.level_cached(a, b, cache);
        match (&self.swap, partners) {
            (Some(s), Some((pa, pb)))
                if l != MISSING_LEVEL
                    && l > s.level
                    && a != b
                    && Self::swapped(s, a, b, pa, pb) =>
            {
                s.level
            }
            _ => l,
        }
    }

    /// The other name attribute the `swapped` level reads, if this comparator has it.
    pub fn partner(&self) -> Option<Attr> {
        self.swap.as_ref().map(|s| s.partner)
    }

    /// The level of two value ids, using `cache` for expensive comparisons.
    #[inline]
    pub fn level_cached(&self, a: ValueId, b: ValueId, cache: &mut LevelCache) -> u8 {
        if a == MISSING || b == MISSING {
            return MISSING_LEVEL;
        }
        if a == b && !self.equal_by_levels {
            return self.equal_level;
        }
        if !self.cached || a == b {
            return self.level_of_distinct(a, b);
        }
        let (lo, hi) = if a < b { (a, b) } else { (b, a) };
        let key = ((lo as u64) << 32) | hi as u64;
        if let Some(l) = cache.get(key) {
            return l;
        }
        let l = self.level_of_distinct(a, b);
        cache.put(key, l);
        l
    }

    fn level_of_distinct(&self, a: ValueId, b: ValueId) -> u8 {
        let (fa, fb) = (&self.folded[a as usize], &self.folded[b as usize]);
        let mut jw: Option<f64> = None;
        let mut jaro: Option<f64> = None;
        for (i, level) in self.levels.iter().enumerate() {
            let hit = match *level {
                Level::Exact => a == b,
                Level::Translit => {
                    fa == fb || intersects(&self.translit[a as usize], &self.translit[b as usize])
                }
                Level::Nickname => nickname_equivalent(fa, fb),
                Level::Initial => initial_agrees(fa, fb),
                Level::Soundex => {
                    let (x, y) = (self.soundex[a as usize], self.soundex[b as usize]);
                    x != u32::MAX && x == y
                }
                Level::JaroWinkler(t) => {
                    *jw.get_or_insert_with(|| strings::jaro_winkler(fa, fb)) >= t
                }
                Level::Jaro(t) => *jaro.get_or_insert_with(|| strings::jaro(fa, fb)) >= t,
                Level::Levenshtein(k) => strings::levenshtein_within(fa, fb, k as usize).is_some(),
                Level::LocalPart => same_local_part(fa, fb),
                Level::AnyToken => shares_token(fa, fb),
                Level::MongeElkan(t) => monge_elkan(fa, fb) >= t,
                Level::DateSwap => match (self.dates[a as usize], self.dates[b as usize]) {
                    (Some(x), Some(y)) => x.0 == y.0 && x.1 == y.2 && x.2 == y.1,
                    _ => false,
                },
                Level::DateOneDigit => one_digit_apart(fa, fb),
                Level::SameYear => match (self.dates[a as usize], self.dates[b as usize]) {
                    (Some(x), Some(y)) => x.0 != 0 && x.0 == y.0,
                    _ => false,
                },
                Level::Partial => match (self.dates[a as usize], self.dates[b as usize]) {
                    (Some(x), Some(y)) => partial_date_agrees(x, y),
                    _ => false,
                },
                Level::Swapped => false,
                Level::Subset => {
                    proper_subset(&self.words[a as usize], &self.words[b as usize])
                        || proper_subset(&self.words[b as usize], &self.words[a as usize])
                }
                Level::Verified => a == b && self.verified[a as usize],
                Level::NationalNumber => {
                    let (x, y) = (self.national[a as usize], self.national[b as usize]);
                    x != u32::MAX && x == y
                }
            };
            if hit {
                return i as u8;
            }
        }
        // Without a `partial` level, a date missing its year or day that agrees with the
        // other on what it holds is no evidence either way (it must not count as a
        // conflict, e.g. for the one-birth-date guard).
        if !self.dates.is_empty() && !self.levels.contains(&Level::Partial) {
            if let (Some(x), Some(y)) = (self.dates[a as usize], self.dates[b as usize]) {
                if partial_date_agrees(x, y) {
                    return MISSING_LEVEL;
                }
            }
        }
        self.disagree()
    }
}

/// Same local part (before `@`) and a different domain.
fn same_local_part(a: &str, b: &str) -> bool {
    match (a.rsplit_once('@'), b.rsplit_once('@')) {
        (Some((la, da)), Some((lb, db))) => !la.is_empty() && la == lb && da != db,
        _ => false,
    }
}

fn tokens(s: &str) -> impl Iterator<Item = &str> {
    s.split([' ', '-', ',', '.', '&', '/'])
        .filter(|t| !t.is_empty())
}

/// The two values share a word of two or more characters that is not a family-name
/// particle (van, de, la, ...).
fn shares_token(a: &str, b: &str) -> bool {
    tokens(a).any(|x| {
        x.chars().count() > 1
            && !crate::standardize::names::is_particle(x)
            && tokens(b).any(|y| x == y)
    })
}

/// Symmetric Monge–Elkan similarity: for each word of one value the best Jaro–Winkler
/// match among the words of the other, averaged; the mean of both directions
/// (Monge & Elkan 1996; the symmetric form is common practice, no source).
pub fn monge_elkan(a: &str, b: &str) -> f64 {
    let ta: Vec<&str> = tokens(a).collect();
    let tb: Vec<&str> = tokens(b).collect();
    if ta.is_empty() || tb.is_empty() {
        return 0.0;
    }
    let one_way = |x: &[&str], y: &[&str]| {
        x.iter()
            .map(|p| {
                y.iter()
                    .map(|q| strings::jaro_winkler(p, q))
                    .fold(0.0, f64::max)
            })
            .sum::<f64>()
            / x.len() as f64
    };
    (one_way(&ta, &tb) + one_way(&tb, &ta)) / 2.0
}

fn intersects(a: &[u32], b: &[u32]) -> bool {
    let (mut i, mut j) = (0, 0);
    while i < a.len() && j < b.len() {
        match a[i].cmp(&b[j]) {
            std::cmp::Ordering::Equal => return true,
            std::cmp::Ordering::Less => i += 1,
            std::cmp::Ordering::Greater => j += 1,
        }
    }
    false
}

/// `j` vs `john`, `j r` vs `john ronald`, `j r r` vs `john ronald`: the tokens agree in
/// order, at least one by initial; extra tokens on one side are initials (middle names
/// one source leaves out), or the shorter side is one initial (`j` vs `john ronald`).
fn initial_agrees(a: &str, b: &str) -> bool {
    let ta: Vec<&str> = a.split([' ', '-', '.']).filter(|t| !t.is_empty()).collect();
    let tb: Vec<&str> = b.split([' ', '-', '.']).filter(|t| !t.is_empty()).collect();
    if ta.is_empty() || tb.is_empty() {
        return false;
    }
    let n = ta.len().min(tb.len());
    if ta.len() != tb.len() {
        let (few, many) = if ta.len() < tb.len() {
            (&ta, &tb)
        } else {
            (&tb, &ta)
        };
        let lone_initial = few.len() == 1 && few[0].chars().count() == 1;
        let extra_initials = many[few.len()..].iter().all(|t| t.chars().count() == 1);
        if !lone_initial && !extra_initials {
            return false;
        }
    }
    let mut by_initial = false;
    for (x, y) in ta.iter().zip(tb.iter()).take(n) {
        if x == y {
            continue;
        }
        let (short, long) = if x.chars().count() <= y.chars().count() {
            (x, y)
        } else {
            (y, x)
        };
        if short.chars().count() == 1 && long.starts_with(short) {
            by_initial = true;
        } else {
            return false;
        }
    }
    by_initial
}

/// Same length and exactly one differing digit (dates as `YYYY-MM-DD`).
fn one_digit_apart(a: &str, b: &str) -> bool {
    a.len() == b.len()
        && a.bytes().zip(b.bytes()).filter(|(x, y)| x != y).count() == 1
        && a.bytes()
            .zip(b.bytes())
            .all(|(x, y)| x == y || (x.is_ascii_digit() && y.is_ascii_digit()))
}

/// A standardized date as (year, month, day); 0 marks a part the value does not hold:
/// `YYYY-MM-DD`, `--MM-DD` (no year, ISO 8601:2004 §4.1.2.3 reduced form as in XML
/// Schema `gMonthDay`) or `YYYY-MM` (no day).
fn parse_date_value(v: &str) -> Option<(u16, u8, u8)> {
    let b = v.as_bytes();
    let num = |s: &str| s.parse::<u16>().ok();
    match b.len() {
        10 if b[4] == b'-' && b[7] == b'-' => {
            Some((num(&v[0..4])?, num(&v[5..7])? as u8, num(&v[8..10])? as u8))
        }
        7 if b[0] == b'-' && b[1] == b'-' && b[4] == b'-' => {
            Some((0, num(&v[2..4])? as u8, num(&v[5..7])? as u8))
        }
        7 if b[4] == b'-' => Some((num(&v[0..4])?, num(&v[5..7])? as u8, 0)),
        _ => None,
    }
}

/// Two dates of which at least one is partial agree on every part both hold (day and
/// month of `--05-17` against `1980-05-17`; year and month of `1980-05` against
/// `1980-05-17`), and share at least the month.
fn partial_date_agrees(x: (u16, u8, u8), y: (u16, u8, u8)) -> bool {
    let partial = |d: (u16, u8, u8)| d.0 == 0 || d.2 == 0;
    if !partial(x) && !partial(y) {
        return false;
    }
    let same = |p: u16, q: u16| p == 0 || q == 0 || p == q;
    x.1 == y.1
        && same(x.0, y.0)
        && same(u16::from(x.2), u16::from(y.2))
        && !(x.0 == 0 && y.0 == 0 && x.2 == 0 && y.2 == 0)
}

/// `a` is a proper subset of `b` (both sorted, without repeats).
fn proper_subset(a: &[u32], b: &[u32]) -> bool {
    if a.is_empty() || a.len() >= b.len() {
        return false;
    }
    let mut j = 0;
    for x in a {
        while j < b.len() && b[j] < *x {
            j += 1;
        }
        if j == b.len() || b[j] != *x {
            return false;
        }
        j += 1;
    }
    true
}

/// A standardized phone value is valid by the numbering plan: written in E.164 without
/// the unverified mark ([`crate::standardize::phone::UNVERIFIED_MARK`]).
fn phone_is_verified(v: &str) -> bool {
    v.starts_with('+') && !v.ends_with(crate::standardize::phone::UNVERIFIED_MARK)
}

/// The national significant number of a standardized phone value.
fn national_significant_number(v: &str) -> Option<String> {
    crate::standardize::phone::national_number_of(v)
}

/// A small direct-mapped cache of level codes keyed by value-id pairs.
#[derive(Debug, Clone)]
pub struct LevelCache {
    slots: Vec<(u64, u8)>,
}

impl Default for LevelCache {
    fn default() -> Self {
        LevelCache {
            slots: vec![(u64::MAX, 0); 1 << 14],
        }
    }
}

impl LevelCache {
    #[inline]
    fn slot(key: u64) -> usize {
        (key.wrapping_mul(0x9E37_79B9_7F4A_7C15) >> 50) as usize
    }

    #[inline]
    fn get(&self, key: u64) -> Option<u8> {
        let (k, l) = self.slots[Self::slot(key)];
        (k == key).then_some(l)
    }

    #[inline]
    fn put(&mut self, key: u64, level: u8) {
        self.slots[Self::slot(key)] = (key, level);
    }
}

/// All comparators of a run, in spec order.
#[derive(Debug, Clone)]
pub struct Comparison {
    /// One per compared attribute.
    pub comparators: Vec<Comparator>,
}

/// Per-thread scratch for [`Comparison::gamma`]: one cache per comparator.
#[derive(Debug, Clone)]
pub struct Scratch {
    caches: Vec<LevelCache>,
}

impl Comparison {
    /// Prepare comparators for the spec's compared attributes over `table`.
    pub fn new(specs: &[CompareSpec], table: &RecordTable) -> Comparison {
        Comparison {
            comparators: specs
                .iter()
                .map(|s| {
                    let mut c = Comparator::new(s, table.column(s.attr));
                    c.attach_partner(table);
                    c
                })
                .collect(),
        }
    }

    /// Number of compared attributes.
    pub fn len(&self) -> usize {
        self.comparators.len()
    }

    /// True when nothing is compared.
    pub fn is_empty(&self) -> bool {
        self.comparators.is_empty()
    }

    /// Levels per attribute including `disagree`.
    pub fn n_levels(&self) -> Vec<usize> {
        self.comparators.iter().map(Comparator::n_levels).collect()
    }

    /// Fresh per-thread scratch.
    pub fn scratch(&self) -> Scratch {
        Scratch {
            caches: vec![LevelCache::default(); self.comparators.len()],
        }
    }

    /// The comparison vector of records `a` and `b`.
    #[inline]
    pub fn gamma(&self, table: &RecordTable, a: u32, b: u32, scratch: &mut Scratch) -> Gamma {
        let mut g = [MISSING_LEVEL; MAX_ATTRS];
        for (k, c) in self.comparators.iter().enumerate() {
            let col = &table.columns[c.attr.index()].ids;
            let (x, y) = (col[a as usize], col[b as usize]);
            g[k] = match &c.swap {
                None => c.level_cached(x, y, &mut scratch.caches[k]),
                Some(s) => {
                    let p = &table.columns[s.partner.index()].ids;
                    let partners = Some((p[a as usize], p[b as usize]));
                    c.level_with_partner(x, y, partners, &mut scratch.caches[k])
                }
            };
        }
        g
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::record::{RecordTableBuilder, StdRecord};

    fn column(values: &[&str]) -> RecordTable {
        let mut b = RecordTableBuilder::new(vec!["s".into()]);
        for (i, v) in values.iter().enumerate() {
            let mut r = StdRecord::default();
            r.set(Attr::GivenName, Some(v.to_string()));
            r.set(Attr::BirthDate, Some(v.to_string()));
            b.push(0, i.to_string(), r);
        }
        b.finish()
    }

    fn levels_of(attr: Attr, levels: &[&str], values: &[&str]) -> Vec<String> {
        let spec = CompareSpec {
            attr,
            levels: levels.iter().map(|l| Level::parse(l).unwrap()).collect(),
            frequency: false,
        };
        let t = column(values);
        let c = Comparator::new(&spec, t.column(attr));
        let ids = &t.column(attr).ids;
        let mut cache = LevelCache::default();
        (1..values.len())
            .map(|i| {
                let l = c.level(ids[0], ids[i]);
                assert_eq!(l, c.level(ids[i], ids[0]), "not symmetric");
                assert_eq!(l, c.level_cached(ids[0], ids[i], &mut cache));
                assert_eq!(l, c.level_cached(ids[i], ids[0], &mut cache));
                c.level_name(l).to_string()
            })
            .collect()
    }

    #[test]
    fn soundex_level_agrees_with_the_blocking_key() {
        // One folding before Soundex in both stages: a value mixing scripts gets the code
        // of its folded Latin letters here and in block::key_value (both O250), so the
        // pair a Soundex key brings together also agrees on the Soundex level. Invented
        // values.
        let values = ["Ösen Иван", "Osen", "Sen", "Иван"];
        let got = levels_of(Attr::GivenName, &["soundex"], &values);
        assert_eq!(got, ["soundex", "disagree", "disagree"]);
        for v in values {
            assert_eq!(
                crate::block::key_value(v, crate::block::KeyFn::Soundex),
                strings::soundex_of_value(v),
                "{v}"
            );
        }
    }

    #[test]
    fn name_levels_in_order() {
        let got = levels_of(
            Attr::GivenName,
            &[
                "exact",
                "jaro_winkler >= 0.92",
                "initial",
                "jaro_winkler >= 0.8",
            ],
            &["martha", "martha", "marhta", "m", "marta", "xavier"],
        );
        // JW(martha, marhta) = 0.961 (Winkler 1990, via docs/check-values.md); marta ~ 0.95.
        assert_eq!(
            got,
            [
                "exact",
                "jaro_winkler >= 0.92",
                "initial",
                "jaro_winkler >= 0.92",
                "disagree"
            ]
        );
    }

    #[test]
    fn names_in_other_scripts_are_compared_as_written() {
        // Cyrillic, Greek and CJK letters have no ASCII folding here: different names
        // must not look equal (they used to fold to nothing). Invented names.
        let levels = [
            "exact",
            "translit",
            "nickname",
            "jaro_winkler >= 0.92",
            "initial",
            "any_token",
            "jaro_winkler >= 0.8",
        ];
        let got = levels_of(
            Attr::GivenName,
            &levels,
            &[
                "петров",
                "петров",
                "соколова",
                "петрова",
                "παπαδόπουλος",
                "王",
                "petrov",
            ],
        );
        // JW(петров, петрова) = 0.971 (6 of 7 characters, common prefix 4; computed by
        // hand with the Winkler formula).
        assert_eq!(
            got,
            [
                "exact",
                "disagree",
                "jaro_winkler >= 0.92",
                "disagree",
                "disagree",
                "disagree"
            ]
        );
        // Two CJK names: different, not equal after folding.
        let got = levels_of(Attr::GivenName, &levels, &["王", "李"]);
        assert_eq!(got, ["disagree"]);
    }

    #[test]
    fn date_levels() {
        let got = levels_of(
            Attr::BirthDate,
            &["exact", "date_swap", "date_one_digit", "same_year"],
            &[
                "1980-03-07",
                "1980-07-03",
                "1980-03-08",
                "1980-11-21",
                "1981-01-01",
            ],
        );
        assert_eq!(
            got,
            ["date_swap", "date_one_digit", "same_year", "disagree"]
        );
    }

    #[test]
    fn word_and_email_levels() {
        assert!(same_local_part(
            "ana.ruiz@mail.example",
            "ana.ruiz@post.example"
        ));
        assert!(!same_local_part(
            "ana.ruiz@mail.example",
            "ana.ruiz@mail.example"
        ));
        assert!(!same_local_part("ana@x.example", "anna@x.example"));
        // Spanish double family name against one of its parts.
        assert!(shares_token("garcia lopez", "garcia"));
        assert!(shares_token("lopez", "garcia lopez"));
        assert!(
            !shares_token("de la cruz", "de leon"),
            "one-letter words do not count"
        );
        // Hand-computed: word order does not matter, identical words give 1.
        assert!((monge_elkan("acme tools", "tools acme") - 1.0).abs() < 1e-12);
        // "acme tools" vs "acme": a->b (1 + JW(tools, acme)) / 2, b->a 1; JW(tools, acme) = 0
        // (no common characters within the window), so (0.5 + 1) / 2 = 0.75.
        assert!((monge_elkan("acme tools", "acme") - 0.75).abs() < 1e-12);
        assert_eq!(monge_elkan("", "acme"), 0.0);
        for (x, y) in [("acme tools", "acme tool co"), ("a b", "b c d")] {
            assert!((monge_elkan(x, y) - monge_elkan(y, x)).abs() < 1e-12);
        }
    }

    #[test]
    fn initials() {
        assert!(initial_agrees("j", "john"));
        assert!(initial_agrees("j r", "john ronald"));
        assert!(initial_agrees("j", "john ronald"));
        // Middle initials one source leaves out (common practice, no source).
        assert!(initial_agrees("j r r", "john ronald"));
        assert!(initial_agrees("john ronald", "j r r"));
        assert!(initial_agrees("j r", "john"));
        assert!(!initial_agrees("john", "john"));
        assert!(!initial_agrees("k", "john"));
        assert!(!initial_agrees("j ronald", "john"));
        assert!(!initial_agrees("j k r", "john ronald"));
        assert!(!initial_agrees("j r", "john k"));
    }

    #[test]
    fn missing_is_its_own_level() {
        let spec = CompareSpec {
            attr: Attr::GivenName,
            levels: vec![Level::Exact],
            frequency: false,
        };
        let t = column(&["a"]);
        let c = Comparator::new(&spec, t.column(Attr::GivenName));
        assert_eq!(c.level(MISSING, 1), MISSING_LEVEL);
        assert_eq!(c.level_name(MISSING_LEVEL), "missing");
    }

    /// Records with a given and a family name each (`None` = missing).
    fn names_table(rows: &[(Option<&str>, Option<&str>)]) -> RecordTable {
        let mut b = RecordTableBuilder::new(vec!["s".into()]);
        for (i, (g, f)) in rows.iter().enumerate() {
            let mut r = StdRecord::default();
            r.set(Attr::GivenName, g.map(String::from));
            r.set(Attr::FamilyName, f.map(String::from));
            b.push(0, i.to_string(), r);
        }
        b.finish()
    }

    #[test]
    fn swapped_names_and_single_words() {
        let specs: Vec<CompareSpec> = [Attr::GivenName, Attr::FamilyName]
            .into_iter()
            .map(|attr| CompareSpec {
                attr,
                levels: ["exact", "jaro_winkler >= 0.92", "swapped"]
                    .iter()
                    .map(|l| Level::parse(l).unwrap())
                    .collect(),
                frequency: false,
            })
            .collect();
        // Invented names.
        let t = names_table(&[
            (Some("mechthilde"), Some("lange")),
            (Some("lange"), Some("mechthilde")),
            (Some("Lange"), Some("otto")),
            (None, Some("mechthilde")),
            (Some("mechthilde"), None),
            (Some("lange"), Some("mechthilde")),
        ]);
        let c = Comparison::new(&specs, &t);
        let mut scratch = c.scratch();
        let names = |a: u32, b: u32, scratch: &mut Scratch| {
            let g = c.gamma(&t, a, b, scratch);
            (
                c.comparators[0].level_name(g[0]).to_string(),
                c.comparators[1].level_name(g[1]).to_string(),
            )
        };
        let pair = |x: &str, y: &str| (x.to_string(), y.to_string());
        // Both parts swapped: both attributes at `swapped`, in either direction.
        assert_eq!(names(0, 1, &mut scratch), pair("swapped", "swapped"));
        assert_eq!(names(1, 0, &mut scratch), pair("swapped", "swapped"));
        // Only one cross agreement with both parts present: no swap.
        assert_eq!(names(0, 2, &mut scratch), pair("disagree", "disagree"));
        // A one-word name held as family name against the same word as given name.
        assert_eq!(names(3, 0, &mut scratch), pair("missing", "swapped"));
        // ... and a one-word given name against the other side's family name.
        assert_eq!(names(4, 1, &mut scratch), pair("swapped", "missing"));
        assert_eq!(names(4, 2, &mut scratch), pair("disagree", "missing"));
        // Equal values stay exact.
        assert_eq!(names(1, 5, &mut scratch), pair("exact", "exact"));
    }

    #[test]
    fn subset_of_words() {
        let got = levels_of(
            Attr::GivenName,
            &["exact", "subset", "any_token"],
            &[
                "maría josé",
                "maría",
                "josé maría",
                "maría luisa",
                "josé",
                "ana",
            ],
        );
        // "josé maría" has the same words: not a proper subset, but a shared word.
        assert_eq!(
            got,
            ["subset", "any_token", "any_token", "subset", "disagree"]
        );
        assert!(proper_subset(&[1, 3], &[1, 2, 3]));
        assert!(!proper_subset(&[1, 4], &[1, 2, 3]));
        assert!(!proper_subset(&[], &[1]));
        assert!(!proper_subset(&[1, 2], &[1, 2]));
    }

    #[test]
    fn partial_dates() {
        // ISO 8601 reduced forms: `--MM-DD` without a year, `YYYY-MM` without a day.
        let got = levels_of(
            Attr::BirthDate,
            &["exact", "partial", "date_swap", "same_year"],
            &[
                "1980-05-17",
                "--05-17",
                "1980-05",
                "--05-18",
                "1981-05",
                "1979-05-17",
                "1980-01-01",
            ],
        );
        assert_eq!(
            got,
            [
                "partial",
                "partial",
                "disagree",
                "disagree",
                "disagree",
                "same_year"
            ]
        );
        // Two partial dates agree on what both hold.
        assert!(partial_date_agrees((0, 5, 17), (0, 5, 17)));
        assert!(partial_date_agrees((0, 5, 17), (1980, 5, 0)));
        assert!(!partial_date_agrees((1980, 5, 17), (1980, 5, 17)));
        assert_eq!(parse_date_value("--05-17"), Some((0, 5, 17)));
        assert_eq!(parse_date_value("1980-05"), Some((1980, 5, 0)));
        assert_eq!(parse_date_value("17.05.1980"), None);
        // Without the `partial` level, agreeing partial dates are neutral (missing) and
        // conflicting ones disagree.
        let got = levels_of(
            Attr::BirthDate,
            &["exact", "same_year"],
            &["1980-05-17", "--05-17", "--06-17", "1980-05"],
        );
        assert_eq!(got, ["missing", "disagree", "same_year"]);
    }

    #[test]
    fn phone_levels() {
        let levels = ["verified", "exact", "national_number"];
        let phone_levels = |values: &[&str]| {
            let spec = CompareSpec {
                attr: Attr::Phone,
                levels: levels.iter().map(|l| Level::parse(l).unwrap()).collect(),
                frequency: false,
            };
            let mut b = RecordTableBuilder::new(vec!["s".into()]);
            for (i, v) in values.iter().enumerate() {
                let mut r = StdRecord::default();
                r.set(Attr::Phone, Some(v.to_string()));
                b.push(0, i.to_string(), r);
            }
            let t = b.finish();
            let c = Comparator::new(&spec, t.column(Attr::Phone));
            let ids = &t.column(Attr::Phone).ids;
            let mut cache = LevelCache::default();
            (1..values.len())
                .map(|i| {
                    let l = c.level_cached(ids[0], ids[i], &mut cache);
                    assert_eq!(l, c.level(ids[i], ids[0]));
                    c.level_name(l).to_string()
                })
                .collect::<Vec<_>>()
        };
        // Valid: docs/check-values.md §5, "06 12 34 56 78" FR -> +33612345678 (valid).
        assert_eq!(
            phone_levels(&[
                "+33612345678",
                "+33612345678",
                "0612345678?",
                "+34612345678",
                "+33612345679"
            ]),
            ["verified", "national_number", "national_number", "disagree"]
        );
        // Unverified numbers (marked `?`) agree at `exact`, not `verified`.
        assert_eq!(
            phone_levels(&["+15814586944?", "+15814586944?", "5814586944?"]),
            ["exact", "national_number"]
        );
    }
}
