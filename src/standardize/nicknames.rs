//! Nickname equivalence of given names.
//!
//! In: two given names (standardized or raw). Out: whether one can be a nickname or
//! diminutive of the other, or both nicknames of the same formal name.
//!
//! Tables (see `data/README.md`): the English `nicknames` table (PyPI package `nicknames`
//! 1.0.1, Apache-2.0) and our own German/French/Spanish diminutives (common practice,
//! no source). Both are lists of links `name -> nickname`. Two names are equivalent when
//! one lists the other, in either direction (`william` ~ `bill`, `bill` ~ `william`).
//! Names that are only linked through a third name are NOT equivalent: the English
//! table also lists links from nicknames to formal names (`bill -> robert`,
//! `bill -> william`), so chaining through a shared neighbour would make `william` ~
//! `robert`; likewise `albert` ~ `al` and `alexander` ~ `al` but `albert` !~
//! `alexander`. Lookups fold names to ASCII first ([`fold_ascii`]), so `José` ~ `Pepe`.

use std::borrow::Cow;
use std::collections::HashMap;
use std::sync::LazyLock;

use super::text::fold_ascii;

const NICKNAMES_CSV: &str = include_str!("data/nicknames.csv");
const DIMINUTIVES_CSV: &str = include_str!("data/diminutives.csv");

/// Per name (folded to ASCII): its own id and the sorted ids of itself and its links.
struct Table {
    names: HashMap<String, (u32, Vec<u32>)>,
}

impl Table {
    fn load() -> Table {
        let mut names: HashMap<String, (u32, Vec<u32>)> = HashMap::new();
        let id_of = |names: &mut HashMap<String, (u32, Vec<u32>)>, name: String| -> u32 {
            let next = names.len() as u32;
            names.entry(name).or_insert_with(|| (next, vec![next])).0
        };
        let mut links: Vec<(u32, u32)> = Vec::new();
        let mut add = |names: &mut HashMap<String, (u32, Vec<u32>)>, a: &str, b: &str| {
            let a = fold_ascii(a.trim());
            let b = fold_ascii(b.trim());
            if a.is_empty() || b.is_empty() || a == b {
                return;
            }
            let ia = id_of(names, a);
            let ib = id_of(names, b);
            links.push((ia, ib));
        };
        for line in NICKNAMES_CSV.lines().skip(1) {
            let mut f = line.split(',');
            if let (Some(a), Some("has_nickname"), Some(b)) = (f.next(), f.next(), f.next()) {
                add(&mut names, a, b);
            }
        }
        for line in DIMINUTIVES_CSV.lines().skip(1) {
            let mut f = line.split(',');
            if let (Some(a), Some(b)) = (f.next(), f.next()) {
                add(&mut names, a, b);
            }
        }
        let mut adjacency: Vec<Vec<u32>> = vec![Vec::new(); names.len()];
        for (a, b) in links {
            adjacency[a as usize].push(b);
            adjacency[b as usize].push(a);
        }
        for (id, ids) in names.values_mut() {
            ids.extend_from_slice(&adjacency[*id as usize]);
            ids.sort_unstable();
            ids.dedup();
        }
        Table { names }
    }
}

static TABLE: LazyLock<Table> = LazyLock::new(Table::load);

/// Fold for lookup without allocating when the name is already lower-case ASCII.
fn fold_key(name: &str) -> Cow<'_, str> {
    let t = name.trim();
    if t.bytes().all(|b| b.is_ascii() && !b.is_ascii_uppercase()) {
        Cow::Borrowed(t)
    } else {
        Cow::Owned(fold_ascii(t))
    }
}

/// A name's place in the nickname tables, for callers that compare many pairs: look
/// each distinct value up once with [`nickname_entry`], then compare entries.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct NicknameEntry {
    id: u32,
    links: &'static [u32],
}

impl NicknameEntry {
    /// The name's id in the tables.
    pub fn id(&self) -> u32 {
        self.id
    }

    /// Sorted ids of the name itself and of the names it is linked to.
    pub fn links(&self) -> &'static [u32] {
        self.links
    }

    /// Same name or directly linked (the [`nickname_equivalent`] test for one word).
    pub fn is_equivalent(&self, other: &NicknameEntry) -> bool {
        self.links.binary_search(&other.id).is_ok()
    }
}

/// The table entry of `name` (folded to ASCII, trimmed), if the tables know it.
pub fn nickname_entry(name: &str) -> Option<NicknameEntry> {
    let key = fold_key(name);
    TABLE
        .names
        .get(key.as_ref())
        .map(|(id, links)| NicknameEntry {
            id: *id,
            links: links.as_slice(),
        })
}

/// Ids of `name` and of the names it is linked to (empty when unknown), after folding
/// to ASCII and trimming. Two equivalent names always share an id, so these work as
/// blocking keys (names sharing an id are not necessarily equivalent).
pub fn nickname_groups(name: &str) -> &'static [u32] {
    nickname_entry(name).map(|e| e.links).unwrap_or(&[])
}

#[cfg(test)]
fn share_group(a: &[u32], b: &[u32]) -> bool {
    a.iter().any(|x| b.binary_search(x).is_ok())
}

fn single_equivalent(a: &str, b: &str) -> bool {
    if a == b {
        return true;
    }
    let table = &*TABLE;
    match (table.names.get(a), table.names.get(b)) {
        (Some((_, links)), Some((id_b, _))) => links.binary_search(id_b).is_ok(),
        _ => false,
    }
}

/// True when `a` and `b` are the same name or nickname-equivalent (see module doc).
///
/// Both are folded to ASCII. When the whole names are not equivalent and at least one
/// of them is a single word, their first words are compared (`mary ann` ~ `molly`,
/// `mary ann` ~ `mary`); two multi-word names only agree as wholes. Empty names are
/// never equivalent.
pub fn nickname_equivalent(a: &str, b: &str) -> bool {
    let fa = fold_key(a);
    let fb = fold_key(b);
    if fa.is_empty() || fb.is_empty() {
        return false;
    }
    if single_equivalent(&fa, &fb) {
        return true;
    }
    let first = |s: &str| s.split([' ', '-']).next().unwrap_or("").to_string();
    let multi_a = fa.contains([' ', '-']);
    let multi_b = fb.contains([' ', '-']);
    if multi_a && multi_b || !multi_a && !multi_b {
        return false;
    }
    let (x, y) = (first(&fa), first(&fb));
    !x.is_empty() && !y.is_empty() && single_equivalent(&x, &y)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn english_table_pairs() {
        // nicknames 1.0.1 names.csv rows (e.g. "aaron,has_nickname,ron",
        // "alexander,has_nickname,al", "william,has_nickname,bill",
        // "margaret,has_nickname,peggy", "robert,has_nickname,bob",
        // "elizabeth,has_nickname,betty").
        for (a, b) in [
            ("Aaron", "Ron"),
            ("alexander", "al"),
            ("William", "Bill"),
            ("margaret", "peggy"),
            ("Robert", "Bob"),
            ("elizabeth", "betty"),
            ("Bob", "Robert"),
        ] {
            assert!(nickname_equivalent(a, b), "{a} ~ {b}");
        }
    }

    #[test]
    fn sharing_a_nickname_does_not_chain_formal_names() {
        // Both in the table with nickname "al" (nicknames 1.0.1), yet different names.
        assert!(nickname_equivalent("albert", "al"));
        assert!(nickname_equivalent("alexander", "al"));
        assert!(!nickname_equivalent("albert", "alexander"));
        // nicknames 1.0.1 lists "bill,has_nickname,robert" and "bill,has_nickname,william".
        assert!(nickname_equivalent("bill", "robert"));
        assert!(nickname_equivalent("bill", "william"));
        assert!(!nickname_equivalent("william", "robert"));
    }

    #[test]
    fn own_diminutives() {
        // data/diminutives.csv (common practice, no source).
        for (a, b) in [
            ("Josef", "Sepp"),
            ("hans", "hansi"),
            ("José", "Pepe"),
            ("jose", "pepe"),
            ("Francisco", "Paco"),
            ("Käthe", "Katharina"),
            ("Concepción", "Conchita"),
            ("José María", "Chema"),
        ] {
            assert!(nickname_equivalent(a, b), "{a} ~ {b}");
        }
    }

    #[test]
    fn multi_word_names() {
        assert!(nickname_equivalent("mary ann", "molly"));
        assert!(nickname_equivalent("mary ann", "mary"));
        assert!(!nickname_equivalent("mary ann", "mary beth"));
        assert!(!nickname_equivalent("", ""));
        assert!(!nickname_equivalent("zzyzx", "bob"));
    }

    #[test]
    fn entries_compare_like_names() {
        let bill = nickname_entry("Bill").unwrap();
        let william = nickname_entry("william").unwrap();
        let robert = nickname_entry("robert").unwrap();
        assert!(bill.is_equivalent(&william) && william.is_equivalent(&bill));
        assert!(william.is_equivalent(&william));
        assert!(!william.is_equivalent(&robert));
        assert!(nickname_entry("zzyzx").is_none());
    }

    #[test]
    fn groups_are_exposed_for_blocking() {
        let bill = nickname_groups("bill");
        let william = nickname_groups("William");
        assert!(!bill.is_empty());
        assert!(share_group(bill, william));
        assert!(nickname_groups("zzyzx").is_empty());
    }

    proptest! {
        #[test]
        fn nickname_equivalent_is_symmetric(a in "[a-z ]{0,10}", b in "[a-z ]{0,10}") {
            prop_assert_eq!(nickname_equivalent(&a, &b), nickname_equivalent(&b, &a));
        }
    }
}
