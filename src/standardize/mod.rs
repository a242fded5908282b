//! Standardize: raw source strings in, comparable values out.
//!
//! Input: one record's raw values per standard attribute (a [`StdRecord`] holding the
//! strings as read) and the source's [`Conventions`] (country, date order, name order).
//! Output: a [`StdRecord`] with standardized values, and counts of parsed, repaired and
//! invalid values per attribute in [`StdStats`]. Every function here is pure.
//!
//! Conventions of the standardized values (other stages rely on them):
//! - names, city, street, company: NFKC (hence NFC), case-folded, punctuation cleaned,
//!   single spaces, diacritics KEPT (`müller`); [`fold_ascii`] and [`translit_variants`]
//!   derive the diacritic-free forms for comparison and blocking ([`text`]).
//! - full_name is split into given_name and family_name when those are missing; titles
//!   and generational suffixes are removed, particles stay with the family name; the
//!   full name itself is written `family, given` ([`names`]).
//! - email: trimmed, lower-case, `+tag` removed; invalid addresses become missing
//!   ([`email`]).
//! - phone: E.164 (`+14155550123`) using the record's own country, else the source
//!   country; invalid become missing ([`phone`]).
//! - birth_date: ISO `YYYY-MM-DD`; impossible dates become missing ([`dates`]).
//! - street without house number and unit, street types abbreviated per country; house
//!   number and unit split off the street when those attributes are missing; postcode
//!   upper-case, normalized per country ([`address`]).
//! - country: ISO 3166 alpha-2 upper case ([`country`]).
//! - company without its legal form, which goes to legal_form when that is missing
//!   ([`company`]).
//! - Placeholders (`null`, `none`, `n/a`, `unknown`, `-`, `?`, ...) count as invalid.
//!
//! Counting: every non-empty raw value counts once as `present` for its attribute and
//! once as `parsed`, `repaired` or `invalid`. Values derived from another attribute
//! (given name from full name, house number from street, legal form from company) are
//! counted under the attribute they came from.

pub mod address;
pub mod company;
pub mod country;
pub mod dates;
pub mod email;
pub mod names;
pub mod nicknames;
pub mod phone;
pub mod text;

pub use dates::parse_date;
pub use nicknames::{nickname_equivalent, nickname_groups};
pub use text::{
    casefold, clean_text, fold_ascii, translit_din, translit_equivalent, translit_key,
    translit_variants,
};

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

/// What standardizing one value gave.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Cleaned {
    /// Standardized as it was.
    Parsed(String),
    /// Standardized after a repair (trunk prefix, two-digit year, split, ...).
    Repaired(String),
    /// Not a usable value; treated as missing.
    Invalid,
}

impl Cleaned {
    /// The standardized value, if any.
    pub fn into_value(self) -> Option<String> {
        match self {
            Cleaned::Parsed(v) | Cleaned::Repaired(v) => Some(v),
            Cleaned::Invalid => None,
        }
    }

    /// Parsed or repaired, depending on `repaired`; invalid when `value` is `None`.
    pub fn from_parts(value: Option<String>, repaired: bool) -> Cleaned {
        match value {
            None => Cleaned::Invalid,
            Some(v) if v.is_empty() => Cleaned::Invalid,
            Some(v) if repaired => Cleaned::Repaired(v),
            Some(v) => Cleaned::Parsed(v),
        }
    }
}

/// Raw values that mean "no value" (common practice, no source).
const PLACEHOLDERS: &[&str] = &[
    "null", "none", "n/a", "n.a.", "unknown", "nil", "-", "--", "?", "xxx", "tbd", "#n/a",
];

fn is_placeholder(s: &str) -> bool {
    s.len() <= 7 && PLACEHOLDERS.iter().any(|p| p.eq_ignore_ascii_case(s))
}

/// The present raw value of `attr` (trimmed), counting it as present.
fn take<'a>(raw: &'a StdRecord, attr: Attr, stats: &mut StdStats) -> Option<&'a str> {
    let v = raw.get(attr)?.trim();
    if v.is_empty() {
        return None;
    }
    stats.attrs[attr.index()].present += 1;
    if is_placeholder(v) {
        stats.attrs[attr.index()].invalid += 1;
        return None;
    }
    Some(v)
}

/// Count `cleaned` for `attr` and return its value.
fn count(attr: Attr, cleaned: Cleaned, stats: &mut StdStats) -> Option<String> {
    let s = &mut stats.attrs[attr.index()];
    match &cleaned {
        Cleaned::Parsed(_) => s.parsed += 1,
        Cleaned::Repaired(_) => s.repaired += 1,
        Cleaned::Invalid => s.invalid += 1,
    }
    cleaned.into_value()
}

/// The source's default country as an alpha-2 code.
fn source_country(conv: &Conventions) -> Option<String> {
    let c = conv.country.as_deref()?.trim();
    if c.len() == 2 && c.bytes().all(|b| b.is_ascii_uppercase()) {
        return Some(c.to_string());
    }
    country::country_code(c).map(str::to_string)
}

/// Standardize one record's raw values (conventions in the module doc).
pub fn standardize(raw: &StdRecord, conv: &Conventions, stats: &mut StdStats) -> StdRecord {
    let mut out = StdRecord::default();

    // Country first: phones, postcodes, streets and titles depend on it.
    if let Some(v) = take(raw, Attr::Country, stats) {
        let c = count(Attr::Country, country::normalize_country(v), stats);
        out.set(Attr::Country, c);
    }
    let record_country = out.get(Attr::Country).map(str::to_string);
    let country = record_country.or_else(|| source_country(conv));
    let country = country.as_deref();

    // Names.
    if let Some(v) = take(raw, Attr::GivenName, stats) {
        let (value, stripped) = names::clean_name_part(v, country);
        let g = count(Attr::GivenName, Cleaned::from_parts(value, stripped), stats);
        out.set(Attr::GivenName, g);
    }
    if let Some(v) = take(raw, Attr::FamilyName, stats) {
        let (value, stripped) = names::clean_name_part(v, country);
        let f = count(
            Attr::FamilyName,
            Cleaned::from_parts(value, stripped),
            stats,
        );
        out.set(Attr::FamilyName, f);
    }
    if let Some(v) = take(raw, Attr::FullName, stats) {
        match names::split_full_name(v, conv.name_order, country) {
            None => {
                count(Attr::FullName, Cleaned::Invalid, stats);
            }
            Some(split) => {
                let mut repaired = split.stripped;
                if out.get(Attr::GivenName).is_none() && split.given.is_some() {
                    out.set(Attr::GivenName, split.given.clone());
                    repaired = true;
                }
                if out.get(Attr::FamilyName).is_none() && split.family.is_some() {
                    out.set(Attr::FamilyName, split.family.clone());
                    repaired = true;
                }
                let full = count(
                    Attr::FullName,
                    Cleaned::from_parts(split.full(), repaired),
                    stats,
                );
                out.set(Attr::FullName, full);
            }
        }
    }

    // Contact.
    if let Some(v) = take(raw, Attr::Email, stats) {
        let e = count(Attr::Email, email::normalize_email(v), stats);
        out.set(Attr::Email, e);
    }
    if let Some(v) = take(raw, Attr::Phone, stats) {
        let p = count(Attr::Phone, phone::normalize_phone(v, country), stats);
        out.set(Attr::Phone, p);
    }
    if let Some(v) = take(raw, Attr::BirthDate, stats) {
        let d = count(
            Attr::BirthDate,
            dates::normalize_date(v, conv.date_order),
            stats,
        );
        out.set(Attr::BirthDate, d);
    }

    // Address.
    if let Some(v) = take(raw, Attr::HouseNumber, stats) {
        let h = count(Attr::HouseNumber, address::normalize_house_number(v), stats);
        out.set(Attr::HouseNumber, h);
    }
    if let Some(v) = take(raw, Attr::Unit, stats) {
        let u = count(Attr::Unit, address::normalize_unit(v), stats);
        out.set(Attr::Unit, u);
    }
    if let Some(v) = take(raw, Attr::Street, stats) {
        let parts = address::parse_street(v, country);
        let split = parts.house_number.is_some() || parts.unit.is_some();
        if out.get(Attr::HouseNumber).is_none() {
            out.set(Attr::HouseNumber, parts.house_number);
        }
        if out.get(Attr::Unit).is_none() {
            out.set(Attr::Unit, parts.unit);
        }
        let s = count(
            Attr::Street,
            Cleaned::from_parts(parts.street, split),
            stats,
        );
        out.set(Attr::Street, s);
    }
    if let Some(v) = take(raw, Attr::Postcode, stats) {
        let p = count(
            Attr::Postcode,
            address::normalize_postcode(v, country),
            stats,
        );
        out.set(Attr::Postcode, p);
    }
    if let Some(v) = take(raw, Attr::City, stats) {
        let c = count(Attr::City, address::normalize_city(v), stats);
        out.set(Attr::City, c);
    }
    if let Some(v) = take(raw, Attr::Region, stats) {
        let r = count(Attr::Region, address::normalize_region(v, country), stats);
        out.set(Attr::Region, r);
    }

    // Company.
    if let Some(v) = take(raw, Attr::LegalForm, stats) {
        let l = count(Attr::LegalForm, company::normalize_legal_form(v), stats);
        out.set(Attr::LegalForm, l);
    }
    if let Some(v) = take(raw, Attr::Company, stats) {
        match company::split_company(v) {
            None => {
                count(Attr::Company, Cleaned::Invalid, stats);
            }
            Some(c) => {
                let split = c.legal_form.is_some();
                if out.get(Attr::LegalForm).is_none() {
                    out.set(Attr::LegalForm, c.legal_form);
                }
                let name = count(
                    Attr::Company,
                    Cleaned::from_parts(Some(c.name), split),
                    stats,
                );
                out.set(Attr::Company, name);
            }
        }
    }
    out
}
