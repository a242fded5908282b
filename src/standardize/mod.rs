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
//! - phone_type: `mobile`, `fixed_line`, `fixed_line_or_mobile`, `toll_free`, `voip`,
//!   ... ([`phone::PhoneType`]); a record without one gets the type of its valid phone
//!   number from the numbering metadata, and none when the phone is missing or invalid.
//! - birth_date: ISO `YYYY-MM-DD`; impossible dates become missing ([`dates`]).
//! - street without house number and unit, street types abbreviated per country; house
//!   number and unit split off the street when those attributes are missing; postcode
//!   upper-case, normalized per country ([`address`]).
//! - country: ISO 3166 alpha-2 upper case ([`country`]).
//! - company without its legal form, which goes to legal_form when that is missing
//!   ([`company`]).
//! - Placeholders (`null`, `none`, `n/a`, `unknown`, `-`, `?`, ...), as raw values or
//!   after standardizing, count as invalid.
//!
//! Counting: every non-empty raw value counts once as `present` for its attribute and
//! once as `parsed`, `repaired` or `invalid`. Values derived from another attribute
//! (given name from full name, house number from street, legal form from company, phone
//! type from phone) are counted under the attribute they came from.

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
pub use nicknames::{nickname_entry, nickname_equivalent, nickname_groups, NicknameEntry};
pub use text::{
    casefold, clean_text, fold_ascii, fold_for_comparison, folds_fully, translit_din,
    translit_equivalent, translit_key, translit_variants,
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
    /// Each record's dates follow its country's custom ([`DateOrder::of_country`]): a
    /// shop serving several countries that writes each customer's dates the local way.
    Country,
}

/// Order of names in a full-name column written without a comma.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum NameOrder {
    /// "John Smith".
    #[default]
    GivenFirst,
    /// "Smith John".
    FamilyFirst,
    /// Free text that mixes orders ("John Smith", "Smith John", "SMITH John",
    /// "Smith, John"): decided per record ([`names::split_mixed`]).
    Mixed,
}

impl DateOrder {
    /// The order named as in the spec (`ymd`, `dmy`, `mdy`).
    pub fn from_name(name: &str) -> Option<DateOrder> {
        match name {
            "ymd" => Some(DateOrder::Ymd),
            "dmy" => Some(DateOrder::Dmy),
            "mdy" => Some(DateOrder::Mdy),
            "country" => Some(DateOrder::Country),
            _ => None,
        }
    }

    /// The order to read a record's dates in: the declared one, or for
    /// [`DateOrder::Country`] the custom of the record's country (the source's country
    /// when the record has none).
    pub fn for_record(self, country: Option<&str>) -> DateOrder {
        match self {
            DateOrder::Country => DateOrder::of_country(country),
            other => other,
        }
    }

    /// The usual all-numeric date order of a country (from memory of national
    /// conventions, no single source): month first in the United States and its
    /// territories, the Philippines, Micronesia, the Marshall Islands and Palau; year
    /// first in China, Japan, both Koreas, Taiwan, Mongolia, Hungary, Lithuania and
    /// Iran; day first everywhere else (most of the world) and when the country is
    /// unknown. A four-digit first field is read as the year in any order.
    pub fn of_country(country: Option<&str>) -> DateOrder {
        match country {
            Some("US" | "PR" | "GU" | "VI" | "AS" | "MP" | "UM" | "PH" | "FM" | "MH" | "PW") => {
                DateOrder::Mdy
            }
            Some("CN" | "JP" | "KR" | "KP" | "TW" | "MN" | "HU" | "LT" | "IR") => DateOrder::Ymd,
            _ => DateOrder::Dmy,
        }
    }
}

impl NameOrder {
    /// The order named as in the spec (`given_first`, `family_first`).
    pub fn from_name(name: &str) -> Option<NameOrder> {
        match name {
            "given_first" => Some(NameOrder::GivenFirst),
            "family_first" => Some(NameOrder::FamilyFirst),
            "mixed" => Some(NameOrder::Mixed),
            _ => None,
        }
    }
}

/// A source's default country as the spec writes it, upper-cased; `None` unless it has
/// the shape of an ISO 3166 alpha-2 code (two ASCII letters).
pub fn default_country(code: &str) -> Option<String> {
    let c = code.trim().to_ascii_uppercase();
    (c.len() == 2 && c.chars().all(|ch| ch.is_ascii_alphabetic())).then_some(c)
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
    /// Given- and family-name word counts of the run, for `NameOrder::Mixed`.
    pub names: Option<std::sync::Arc<names::NameFrequencies>>,
    /// The countries all sources of the spec declare (alpha-2, in spec order): the
    /// last regions a phone number written without its country code is tried in.
    pub spec_countries: std::sync::Arc<Vec<String>>,
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
    /// Kept phone numbers by how their region was decided, indexed by
    /// [`phone::RegionMethod::index`].
    pub phone_regions: [u64; phone::RegionMethod::ALL.len()],
    /// Kept phone numbers that are possible but not valid by the numbering plan (or
    /// whose region could not be decided): compared, marked unverified.
    pub phone_unverified: u64,
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
        for (a, b) in self.phone_regions.iter_mut().zip(other.phone_regions) {
            *a += b;
        }
        self.phone_unverified += other.phone_unverified;
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
    "null", "none", "n/a", "n.a.", "unknown", "nil", "-", "--", "?", "#n/a",
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

/// Count `cleaned` for `attr` and return its value. A value that standardizes to a
/// placeholder (`None Inc` -> `none`) is invalid too, so that standardizing the output
/// again changes nothing.
fn count(attr: Attr, cleaned: Cleaned, stats: &mut StdStats) -> Option<String> {
    let cleaned = match cleaned {
        Cleaned::Parsed(v) | Cleaned::Repaired(v) if is_placeholder(&v) => Cleaned::Invalid,
        other => other,
    };
    let s = &mut stats.attrs[attr.index()];
    match &cleaned {
        Cleaned::Parsed(_) => s.parsed += 1,
        Cleaned::Repaired(_) => s.repaired += 1,
        Cleaned::Invalid => s.invalid += 1,
    }
    cleaned.into_value()
}

/// The source's default country as an alpha-2 code.
fn source_country(conv: &Conventions) -> Option<&str> {
    let c = conv.country.as_deref()?.trim();
    if c.len() == 2 && c.bytes().all(|b| b.is_ascii_uppercase()) {
        return Some(c);
    }
    country::country_code(c)
}

/// Summary lines about phones and countries: how many numbers were kept unverified,
/// how each kept number's region was decided, and how many country values could not be
/// mapped to an ISO code. Empty when there is nothing to say.
pub fn summary_lines(stats: &StdStats) -> Vec<String> {
    let mut lines = Vec::new();
    let kept: u64 = stats.phone_regions.iter().sum();
    if kept > 0 {
        let by: Vec<String> = phone::RegionMethod::ALL
            .iter()
            .filter(|m| stats.phone_regions[m.index()] > 0)
            .map(|m| format!("{} {}", m.name(), stats.phone_regions[m.index()]))
            .collect();
        lines.push(format!(
            "phones: {kept} kept, {} of them unverified (possible but not valid by the numbering plan, or no region); region from: {}",
            stats.phone_unverified,
            by.join(", ")
        ));
    }
    let country = stats.attrs[Attr::Country.index()];
    if country.invalid > 0 {
        lines.push(format!(
            "country: {} of {} values not mapped to an ISO 3166 code (treated as missing)",
            country.invalid, country.present
        ));
    }
    lines
}

/// The regions a phone number written without its country code may belong to, best
/// evidence first: the record's country column, its e-mail's country-code domain, its
/// postcode's shape, the source's country, then the other countries the spec's sources
/// declare (each region once).
fn phone_regions<'a>(
    raw: &'a StdRecord,
    out: &'a StdRecord,
    record_country: Option<&'a str>,
    conv: &'a Conventions,
) -> Vec<(&'a str, phone::RegionMethod)> {
    use phone::RegionMethod as M;
    let mut regions: Vec<(&str, M)> = Vec::with_capacity(4 + conv.spec_countries.len());
    let mut add = |r: Option<&'a str>, m: M| {
        if let Some(r) = r {
            if !regions.iter().any(|(x, _)| *x == r) {
                regions.push((r, m));
            }
        }
    };
    add(record_country, M::Country);
    add(
        out.get(Attr::Email).and_then(phone::region_of_email),
        M::EmailDomain,
    );
    add(
        raw.get(Attr::Postcode)
            .and_then(address::country_of_postcode_shape),
        M::Postcode,
    );
    add(source_country(conv), M::Source);
    for c in conv.spec_countries.iter() {
        add(Some(c.as_str()), M::SpecCountries);
    }
    regions
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
    let country = record_country.as_deref().or_else(|| source_country(conv));

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
        let split = match (&conv.names, conv.name_order) {
            (Some(freqs), NameOrder::Mixed) => names::split_mixed(v, country, freqs),
            _ => names::split_full_name(v, conv.name_order, country),
        };
        match split {
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
    if let Some(v) = take(raw, Attr::PhoneType, stats) {
        let t = count(Attr::PhoneType, phone::normalize_phone_type(v), stats);
        out.set(Attr::PhoneType, t);
    }
    if let Some(v) = take(raw, Attr::Phone, stats) {
        let regions = phone_regions(raw, &out, record_country.as_deref(), conv);
        let outcome = phone::standardize_phone(v, &regions);
        let p = count(Attr::Phone, outcome.value, stats);
        if p.is_some() {
            if let Some(m) = outcome.method {
                stats.phone_regions[m.index()] += 1;
            }
            if !outcome.verified {
                stats.phone_unverified += 1;
            }
        }
        // The type only comes with a valid number (`count` may still reject the value).
        if p.is_some() && out.get(Attr::PhoneType).is_none() {
            out.set(Attr::PhoneType, outcome.kind.map(|k| k.name().to_string()));
        }
        out.set(Attr::Phone, p);
    }
    if let Some(v) = take(raw, Attr::BirthDate, stats) {
        let d = count(
            Attr::BirthDate,
            dates::normalize_date(v, conv.date_order.for_record(country)),
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

/// CPU time of the calling thread in seconds, for timing tests that must not count
/// time lost to other processes on a shared machine.
#[cfg(test)]
pub(crate) fn thread_cpu_seconds() -> Option<f64> {
    crate::util::cpu::thread_cpu_time().map(|d| d.as_secs_f64())
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn record(values: &[(Attr, &str)]) -> StdRecord {
        let mut r = StdRecord::default();
        for (a, v) in values {
            r.set(*a, Some(v.to_string()));
        }
        r
    }

    fn conv(country: &str, date_order: DateOrder, name_order: NameOrder) -> Conventions {
        Conventions {
            country: Some(country.to_string()),
            date_order,
            name_order,
            ..Default::default()
        }
    }

    #[test]
    fn us_record() {
        let raw = record(&[
            (Attr::FullName, "Dr. John Q. Smith Jr."),
            (Attr::Email, " John.Smith+crm@Example.COM "),
            (Attr::Phone, "(650) 253-0000 ext. 123"),
            (Attr::Street, "123 North Main Street Apt 4B"),
            (Attr::Postcode, "02134-1234"),
            (Attr::City, "Boston"),
            (Attr::Region, "Massachusetts"),
            (Attr::BirthDate, "05/17/1980"),
            (Attr::Company, "Acme Widgets, Inc."),
        ]);
        let mut stats = StdStats::default();
        let c = conv("US", DateOrder::Mdy, NameOrder::GivenFirst);
        let out = standardize(&raw, &c, &mut stats);
        assert_eq!(out.get(Attr::GivenName), Some("john q"));
        assert_eq!(out.get(Attr::FamilyName), Some("smith"));
        assert_eq!(out.get(Attr::FullName), Some("smith, john q"));
        assert_eq!(out.get(Attr::Email), Some("john.smith@example.com"));
        // docs/check-values.md §5: "(650) 253-0000 ext. 123", US -> +16502530000.
        assert_eq!(out.get(Attr::Phone), Some("+16502530000"));
        // docs/check-values.md §5, number type: FIXED_LINE_OR_MOBILE.
        assert_eq!(out.get(Attr::PhoneType), Some("fixed_line_or_mobile"));
        assert_eq!(out.get(Attr::Street), Some("n main st"));
        assert_eq!(out.get(Attr::HouseNumber), Some("123"));
        assert_eq!(out.get(Attr::Unit), Some("apt 4b"));
        assert_eq!(out.get(Attr::Postcode), Some("02134"));
        assert_eq!(out.get(Attr::City), Some("boston"));
        assert_eq!(out.get(Attr::Region), Some("ma"));
        assert_eq!(out.get(Attr::BirthDate), Some("1980-05-17"));
        assert_eq!(out.get(Attr::Company), Some("acme widgets"));
        assert_eq!(out.get(Attr::LegalForm), Some("inc"));
        assert_eq!(out.get(Attr::Country), None);
        let fulls = stats.attrs[Attr::FullName.index()];
        assert_eq!((fulls.present, fulls.repaired), (1, 1));
        assert_eq!(stats.attrs[Attr::Phone.index()].repaired, 1);
        assert_eq!(stats.attrs[Attr::BirthDate.index()].parsed, 1);
        // Derived values are not counted under the attribute they were copied into.
        assert_eq!(stats.attrs[Attr::GivenName.index()].present, 0);
    }

    #[test]
    fn german_record_and_record_country_wins() {
        let raw = record(&[
            (Attr::GivenName, "Jörg"),
            (Attr::FamilyName, "Müller-Lüdenscheidt"),
            (Attr::Street, "Hauptstraße 12a"),
            (Attr::Postcode, "1067"),
            (Attr::City, "Dresden"),
            (Attr::Country, "Deutschland"),
            (Attr::Phone, "030 12345678"),
            (Attr::BirthDate, "17.05.1980"),
            (Attr::Company, "Müller GmbH & Co. KG"),
        ]);
        let mut stats = StdStats::default();
        // The source says US, but the record's own country is Germany.
        let c = conv("US", DateOrder::Dmy, NameOrder::GivenFirst);
        let out = standardize(&raw, &c, &mut stats);
        assert_eq!(out.get(Attr::Country), Some("DE"));
        // docs/check-values.md §5: "030 12345678", DE -> +493012345678.
        assert_eq!(out.get(Attr::Phone), Some("+493012345678"));
        // docs/check-values.md §5, number type: FIXED_LINE.
        assert_eq!(out.get(Attr::PhoneType), Some("fixed_line"));
        assert_eq!(out.get(Attr::Postcode), Some("01067"));
        assert_eq!(out.get(Attr::Street), Some("hauptstr"));
        assert_eq!(out.get(Attr::HouseNumber), Some("12a"));
        assert_eq!(out.get(Attr::GivenName), Some("jörg"));
        assert_eq!(out.get(Attr::FamilyName), Some("müller-lüdenscheidt"));
        assert_eq!(out.get(Attr::BirthDate), Some("1980-05-17"));
        assert_eq!(out.get(Attr::Company), Some("müller"));
        assert_eq!(out.get(Attr::LegalForm), Some("gmbh & co kg"));
        assert_eq!(out.get(Attr::FullName), None);
    }

    #[test]
    fn existing_parts_are_not_overwritten() {
        let raw = record(&[
            (Attr::FullName, "Smith, Robert"),
            (Attr::GivenName, "Bob"),
            (Attr::Street, "12 Main St"),
            (Attr::HouseNumber, "12 A"),
            (Attr::Company, "Foo Ltd"),
            (Attr::LegalForm, "Limited"),
        ]);
        let mut stats = StdStats::default();
        let out = standardize(
            &raw,
            &conv("GB", DateOrder::Dmy, NameOrder::GivenFirst),
            &mut stats,
        );
        assert_eq!(out.get(Attr::GivenName), Some("bob"));
        assert_eq!(out.get(Attr::FamilyName), Some("smith"));
        assert_eq!(out.get(Attr::HouseNumber), Some("12a"));
        assert_eq!(out.get(Attr::Street), Some("main st"));
        assert_eq!(out.get(Attr::LegalForm), Some("ltd"));
    }

    #[test]
    fn phone_type_from_the_number_unless_given() {
        let c = conv("DE", DateOrder::Dmy, NameOrder::GivenFirst);
        // docs/check-values.md §5: "0151 23456789", DE -> MOBILE.
        let mut stats = StdStats::default();
        let out = standardize(&record(&[(Attr::Phone, "0151 23456789")]), &c, &mut stats);
        assert_eq!(out.get(Attr::PhoneType), Some("mobile"));
        // Derived: counted under phone only.
        assert_eq!(stats.attrs[Attr::PhoneType.index()], AttrStats::default());
        assert_eq!(stats.attrs[Attr::Phone.index()].repaired, 1);

        // The source's own column wins, and is counted under phone_type.
        let raw = record(&[
            (Attr::Phone, "0151 23456789"),
            (Attr::PhoneType, "Landline"),
        ]);
        let mut stats = StdStats::default();
        let out = standardize(&raw, &c, &mut stats);
        assert_eq!(out.get(Attr::PhoneType), Some("fixed_line"));
        let t = stats.attrs[Attr::PhoneType.index()];
        assert_eq!((t.present, t.repaired), (1, 1));

        // An unreadable type column leaves room for the derived type.
        let raw = record(&[(Attr::Phone, "030 12345678"), (Attr::PhoneType, "work")]);
        let mut stats = StdStats::default();
        let out = standardize(&raw, &c, &mut stats);
        assert_eq!(out.get(Attr::PhoneType), Some("fixed_line"));
        assert_eq!(stats.attrs[Attr::PhoneType.index()].invalid, 1);

        // No valid number, no type. docs/check-values.md §5: "07700 900123", GB is invalid.
        for (phone, country) in [("07700 900123", "GB"), ("n/a", "GB"), ("12", "DE")] {
            let out = standardize(
                &record(&[(Attr::Phone, phone)]),
                &conv(country, DateOrder::Dmy, NameOrder::GivenFirst),
                &mut StdStats::default(),
            );
            assert_eq!(out.get(Attr::PhoneType), None, "{phone}");
        }
    }

    #[test]
    fn invalid_values_become_missing_and_are_counted() {
        let raw = record(&[
            (Attr::Email, "not-an-email"),
            (Attr::Phone, "555-1234"),
            (Attr::BirthDate, "1980-02-30"),
            (Attr::Postcode, "ABCDE"),
            (Attr::Country, "Atlantis"),
            (Attr::City, "N/A"),
            (Attr::GivenName, "   "),
        ]);
        let mut stats = StdStats::default();
        let out = standardize(
            &raw,
            &conv("US", DateOrder::Ymd, NameOrder::GivenFirst),
            &mut stats,
        );
        for a in [
            Attr::Email,
            Attr::Phone,
            Attr::BirthDate,
            Attr::Postcode,
            Attr::Country,
            Attr::City,
        ] {
            assert_eq!(out.get(a), None, "{a}");
            assert_eq!(stats.attrs[a.index()].invalid, 1, "{a}");
            assert_eq!(stats.attrs[a.index()].present, 1, "{a}");
        }
        // Blank is not present at all.
        assert_eq!(stats.attrs[Attr::GivenName.index()], AttrStats::default());
    }

    #[test]
    fn stats_merge_adds() {
        let mut a = StdStats::default();
        let mut b = StdStats::default();
        let raw = record(&[(Attr::Email, "a@b.co"), (Attr::Phone, "x")]);
        let c = Conventions::default();
        standardize(&raw, &c, &mut a);
        standardize(&raw, &c, &mut b);
        a.merge(&b);
        assert_eq!(a.attrs[Attr::Email.index()].parsed, 2);
        assert_eq!(a.attrs[Attr::Phone.index()].invalid, 2);
    }

    fn any_record() -> impl Strategy<Value = StdRecord> {
        proptest::collection::vec(proptest::option::of("\\PC{0,24}"), Attr::COUNT).prop_map(
            |vals| {
                let mut r = StdRecord::default();
                for (a, v) in Attr::ALL.iter().zip(vals) {
                    r.set(*a, v);
                }
                r
            },
        )
    }

    fn realistic_record() -> impl Strategy<Value = StdRecord> {
        (
            "(Dr\\.? |Mr |Frau )?[A-Z][a-zäöü]{1,8}( van| de)? [A-Z][a-zäöüß]{1,10}( Jr\\.?)?",
            "[a-z]{1,6}(\\+[a-z]{1,3})?@[a-z]{1,6}\\.(com|de)",
            "\\(?[2-9][0-9]{2}\\)? ?[2-9][0-9]{2}-[0-9]{4}",
            "[1-9][0-9]{0,3} [A-Z][a-z]{2,8} (Street|Avenue|Road|Straße)( Apt [0-9]{1,3})?",
            "[0-9]{4,5}(-[0-9]{4})?",
            "(0?[1-9]|1[0-2])/(0?[1-9]|1[0-9]|2[0-8])/(19[0-9]{2}|[0-9]{2})",
            "[A-Z][a-z]{2,8}( and [A-Z][a-z]{2,6})? (Inc\\.|GmbH|LLC|Ltd)",
        )
            .prop_map(|(name, email, phone, street, zip, date, company)| {
                record(&[
                    (Attr::FullName, &name),
                    (Attr::Email, &email),
                    (Attr::Phone, &phone),
                    (Attr::Street, &street),
                    (Attr::Postcode, &zip),
                    (Attr::BirthDate, &date),
                    (Attr::Company, &company),
                    (Attr::City, "Springfield"),
                ])
            })
    }

    proptest! {
        #[test]
        fn never_panics_and_counts_add_up(raw in any_record(), country in "[A-Z]{2}|\\PC{0,4}") {
            for order in [DateOrder::Ymd, DateOrder::Dmy, DateOrder::Mdy] {
                let c = Conventions { country: Some(country.clone()), date_order: order, name_order: NameOrder::FamilyFirst, ..Default::default() };
                let mut stats = StdStats::default();
                let out = standardize(&raw, &c, &mut stats);
                for s in stats.attrs {
                    prop_assert_eq!(s.present, s.parsed + s.repaired + s.invalid);
                }
                for v in out.values.iter().flatten() {
                    prop_assert!(!v.is_empty());
                }
            }
        }

        #[test]
        fn standardizing_twice_changes_nothing(raw in realistic_record()) {
            let c = conv("US", DateOrder::Mdy, NameOrder::GivenFirst);
            let once = standardize(&raw, &c, &mut StdStats::default());
            // The second pass reads ISO dates, which are year-first in any order.
            let twice = standardize(&once, &c, &mut StdStats::default());
            prop_assert_eq!(&twice, &once);
            // Every valid phone carries its type; unverified ones (marked) do not.
            let valid = once
                .get(Attr::Phone)
                .is_some_and(|p| !p.ends_with(phone::UNVERIFIED_MARK));
            prop_assert_eq!(valid, once.get(Attr::PhoneType).is_some());
        }
    }

    proptest! {
        #[test]
        fn standardizing_noisy_text_twice_changes_nothing(
            vals in proptest::collection::vec(
                proptest::option::of("[A-Za-zäöüß0-9 .,'&#/+@-]{0,20}"),
                Attr::COUNT,
            ),
            order in prop_oneof![Just(NameOrder::GivenFirst), Just(NameOrder::FamilyFirst)],
            country in prop_oneof![Just("US"), Just("DE"), Just("FR"), Just("ES"), Just("GB")],
        ) {
            let mut r = StdRecord::default();
            for (a, v) in Attr::ALL.iter().zip(vals) {
                r.set(*a, v);
            }
            let c = Conventions {
                country: Some(country.to_string()),
                date_order: DateOrder::Ymd,
                name_order: order,
                ..Default::default()
            };
            let once = standardize(&r, &c, &mut StdStats::default());
            let twice = standardize(&once, &c, &mut StdStats::default());
            prop_assert_eq!(twice, once);
        }
    }

    /// Single-thread throughput on realistic records.
    /// Run: `cargo test --release --lib standardize_speed -- --ignored --nocapture`.
    #[test]
    #[ignore = "timing"]
    fn standardize_speed() {
        use crate::util::Rng;
        let mut rng = Rng::new(42);
        let given = [
            "John",
            "Mary",
            "Jörg",
            "José",
            "Anna",
            "William",
            "Zoë",
            "Hans-Peter",
        ];
        let family = [
            "Smith",
            "Müller",
            "van der Berg",
            "García López",
            "O'Brien",
            "Dubois",
        ];
        let streets = [
            "Main Street",
            "Oak Avenue",
            "Hauptstraße",
            "Elm Road",
            "rue de la Paix",
        ];
        let n = 200_000;
        let records: Vec<(StdRecord, Conventions)> = (0..n)
            .map(|i| {
                let us = i % 2 == 0;
                let g = *rng.pick(&given);
                let f = *rng.pick(&family);
                let mut r = record(&[
                    (Attr::GivenName, g),
                    (Attr::FamilyName, f),
                    (Attr::City, if us { "Springfield" } else { "München" }),
                    (Attr::Company, "Acme Widgets, Inc."),
                ]);
                let email = format!("{}.{}{}@example.com", g.to_lowercase(), f.len(), i);
                let phone = if us {
                    format!(
                        "({}) {}-{:04}",
                        201 + rng.below(700),
                        200 + rng.below(700),
                        rng.below(10_000)
                    )
                } else {
                    format!(
                        "0{} {}",
                        30 + rng.below(60),
                        1_000_000 + rng.below(8_000_000)
                    )
                };
                let street = format!("{} {}", 1 + rng.below(999), rng.pick(&streets));
                let zip = format!("{:05}", rng.below(99_999));
                let date = format!(
                    "{}/{}/19{}",
                    1 + rng.below(12),
                    1 + rng.below(28),
                    30 + rng.below(70)
                );
                r.set(Attr::Email, Some(email));
                r.set(Attr::Phone, Some(phone));
                r.set(Attr::Street, Some(street));
                r.set(Attr::Postcode, Some(zip));
                r.set(Attr::BirthDate, Some(date));
                let c = conv(
                    if us { "US" } else { "DE" },
                    DateOrder::Mdy,
                    NameOrder::GivenFirst,
                );
                (r, c)
            })
            .collect();
        // Warm the lazy tables.
        let mut stats = StdStats::default();
        standardize(&records[0].0, &records[0].1, &mut stats);
        let t = std::time::Instant::now();
        let cpu = thread_cpu_seconds();
        let mut present = 0;
        for (r, c) in &records {
            let out = standardize(r, c, &mut stats);
            present += out.values.iter().flatten().count();
        }
        let dt = t.elapsed();
        let cpu = thread_cpu_seconds().zip(cpu).map(|(b, a)| b - a);
        println!(
            "standardize: {n} records, {present} values, single thread: {:.0} records/s wall, \
             {:.0} records/s CPU",
            n as f64 / dt.as_secs_f64(),
            cpu.map_or(f64::NAN, |c| n as f64 / c)
        );
        // Per attribute: the same records with only that attribute present.
        for a in Attr::ALL {
            let s = stats.attrs[a.index()];
            if s.present == 0 {
                continue;
            }
            let only: Vec<StdRecord> = records
                .iter()
                .map(|(r, _)| {
                    let mut o = StdRecord::default();
                    o.set(a, r.get(a).map(str::to_string));
                    o
                })
                .collect();
            let t = std::time::Instant::now();
            let cpu = thread_cpu_seconds();
            let mut st = StdStats::default();
            for (o, (_, c)) in only.iter().zip(&records) {
                std::hint::black_box(standardize(o, c, &mut st));
            }
            let wall = t.elapsed().as_nanos() as f64 / n as f64;
            let cpu = thread_cpu_seconds()
                .zip(cpu)
                .map(|(b, a)| (b - a) * 1e9 / n as f64);
            println!(
                "  {a}: {wall:.0} ns/value wall, {:.0} ns/value CPU; {s:?}",
                cpu.unwrap_or(f64::NAN)
            );
        }
    }
}
