//! Keys: clusters in, one surrogate customer key per cluster out.
//!
//! A cluster's key is derived from its anchor record, the member with the smallest
//! (source name, source id). Its form is `SK-XXXX-XXXX-XXXX`: the letters `SK`, then 60
//! bits of a stable hash of the anchor in three hyphen-separated groups of four
//! characters from the Crockford base-32 alphabet (`0-9` and `A-Z` without `I`, `L`, `O`
//! and `U`, so that no character can be misread as another), e.g. `SK-7G3M-Q2XD-94KT`.
//! The fixed prefix and the hyphens make a customer key impossible to mistake for a
//! source id column value at a glance, and [`is_customer_key`] recognizes the form.
//!
//! The key does not depend on record order, thread count or on other clusters, and it
//! stays the same when unrelated records are added. Hash collisions are resolved
//! deterministically by rehashing with a counter, in anchor order.

use std::collections::HashSet;

pub mod inherit;

use crate::record::RecordTable;
use crate::util::stable_hash;

/// Customer keys of a run: one per cluster, and each record's cluster.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Keys {
    /// Distinct keys, one per cluster, in anchor order.
    pub keys: Vec<String>,
    /// Per record, the index of its key in `keys`.
    pub of_record: Vec<u32>,
}

impl Keys {
    /// The key of record `r`.
    pub fn key(&self, r: usize) -> &str {
        &self.keys[self.of_record[r] as usize]
    }
}

/// Customer keys, given each record's cluster label (any id below the number of records
/// shared by the members of a cluster, e.g. the smallest member).
pub fn assign(table: &RecordTable, label: &[u32]) -> Keys {
    const NONE: u32 = u32::MAX;
    // Anchor of each cluster: the member with the smallest (source name, id).
    let mut anchor = vec![NONE; label.len()];
    for (r, &l) in label.iter().enumerate() {
        let a = &mut anchor[l as usize];
        if *a == NONE || record_order(table, r) < record_order(table, *a as usize) {
            *a = r as u32;
        }
    }
    let mut anchors: Vec<(u32, u32)> = anchor
        .iter()
        .enumerate()
        .filter(|(_, a)| **a != NONE)
        .map(|(l, &a)| (l as u32, a))
        .collect();
    anchors
        .sort_by(|x, y| record_order(table, x.1 as usize).cmp(&record_order(table, y.1 as usize)));
    let mut used: HashSet<String> = HashSet::with_capacity(anchors.len());
    let mut index_of_label = vec![NONE; label.len()];
    let mut keys = Vec::with_capacity(anchors.len());
    for (l, a) in anchors {
        let (source, id) = record_order(table, a as usize);
        let mut salt = 0u32;
        let key = loop {
            let k = key_for(source, id, salt);
            if used.insert(k.clone()) {
                break k;
            }
            salt += 1;
        };
        index_of_label[l as usize] = keys.len() as u32;
        keys.push(key);
    }
    let of_record = label.iter().map(|&l| index_of_label[l as usize]).collect();
    Keys { keys, of_record }
}

fn record_order(table: &RecordTable, r: usize) -> (&str, &str) {
    (table.source_name(r), table.id[r].as_str())
}

/// The key of an anchor record (`salt` > 0 only after a collision).
pub fn key_for(source: &str, id: &str, salt: u32) -> String {
    let mut bytes = Vec::with_capacity(source.len() + id.len() + 8);
    bytes.extend_from_slice(source.as_bytes());
    bytes.push(0);
    bytes.extend_from_slice(id.as_bytes());
    if salt > 0 {
        bytes.push(0);
        bytes.extend_from_slice(&salt.to_le_bytes());
    }
    // mix64 spreads FNV's weak high bits so similar ids get unrelated keys.
    format_key(crate::util::mix64(stable_hash(&bytes)) >> 4)
}

/// Crockford's base-32 alphabet: digits and capital letters without I, L, O and U.
const ALPHABET: &[u8; 32] = b"0123456789ABCDEFGHJKMNPQRSTVWXYZ";

/// Length of a customer key: `SK-` and three groups of four characters with hyphens.
pub const KEY_LEN: usize = 17;

/// The key for the low 60 bits of `bits`.
fn format_key(bits: u64) -> String {
    let mut key = String::with_capacity(KEY_LEN);
    key.push_str("SK");
    for group in 0..3 {
        key.push('-');
        for i in 0..4 {
            let shift = 55 - 5 * (group * 4 + i);
            key.push(ALPHABET[((bits >> shift) & 31) as usize] as char);
        }
    }
    key
}

/// True when `s` has the form of a customer key (`SK-XXXX-XXXX-XXXX`, Crockford base 32).
pub fn is_customer_key(s: &str) -> bool {
    let b = s.as_bytes();
    b.len() == KEY_LEN
        && b.starts_with(b"SK")
        && [2, 7, 12].iter().all(|&i| b[i] == b'-')
        && b.iter()
            .enumerate()
            .filter(|(i, _)| *i >= 3 && ![7, 12].contains(i))
            .all(|(_, c)| ALPHABET.contains(c))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::record::{RecordTableBuilder, StdRecord};

    fn table(rows: &[(u16, &str)]) -> RecordTable {
        let mut b = RecordTableBuilder::new(vec!["crm".into(), "shop".into()]);
        for (s, id) in rows {
            b.push(*s, id.to_string(), StdRecord::default());
        }
        b.finish()
    }

    #[test]
    fn keys_follow_the_anchor_not_the_order() {
        let t = table(&[(1, "9"), (0, "5"), (0, "7"), (1, "1")]);
        let k = assign(&t, &[0, 0, 2, 2]);
        let keys: Vec<&str> = (0..4).map(|r| k.key(r)).collect();
        assert_eq!(keys[0], keys[1]);
        assert_eq!(keys[2], keys[3]);
        assert_ne!(keys[0], keys[2]);
        assert_eq!(keys[0], key_for("crm", "5", 0));
        assert_eq!(keys[2], key_for("crm", "7", 0));
        // Same clusters, other labels and record order: same keys.
        let t2 = table(&[(0, "7"), (1, "1"), (1, "9"), (0, "5")]);
        let k2 = assign(&t2, &[1, 1, 3, 3]);
        let keys2: Vec<&str> = (0..4).map(|r| k2.key(r)).collect();
        assert_eq!(keys2[0], keys[2]);
        assert_eq!(keys2[3], keys[0]);
        assert!(is_customer_key(keys[0]), "{}", keys[0]);
    }

    #[test]
    fn key_form() {
        assert_eq!(format_key(0), "SK-0000-0000-0000");
        // All 60 bits set: the last alphabet character everywhere.
        assert_eq!(format_key((1 << 60) - 1), "SK-ZZZZ-ZZZZ-ZZZZ");
        // 5 bits per character, most significant first: 1 in the lowest 5 bits is the
        // last character; 31 << 55 the first.
        assert_eq!(format_key(1), "SK-0000-0000-0001");
        assert_eq!(format_key(31 << 55), "SK-Z000-0000-0000");
        assert_eq!(format_key(10 << 50), "SK-0A00-0000-0000");
        assert!(is_customer_key("SK-7G3M-Q2XD-94KT"));
        for not_a_key in [
            "C887B5F51BD3D",
            "SK-7G3M-Q2XD-94K",
            "SK-7G3M-Q2XD-94KI", // I is not in the alphabet
            "SK_7G3M-Q2XD-94KT",
            "sk-7g3m-q2xd-94kt",
        ] {
            assert!(!is_customer_key(not_a_key), "{not_a_key}");
        }
    }

    proptest::proptest! {
        #[test]
        fn every_key_has_the_form_and_is_stable(source in "[a-z]{1,8}", id in "\\PC{0,20}", salt in 0u32..4) {
            let k = key_for(&source, &id, salt);
            proptest::prop_assert!(is_customer_key(&k), "{}", k);
            proptest::prop_assert_eq!(k, key_for(&source, &id, salt));
        }
    }
}
