//! Address parts: street line, house number, unit, postcode, city, region.
//!
//! In: raw strings and the record's country (ISO alpha-2, or unknown). Out:
//! - street: [`clean_text`] rules, street types abbreviated per country, house number
//!   and unit split off ([`parse_street`]);
//! - house number: lower-case, number and letter suffix joined (`12 a` → `12a`,
//!   `12 bis` → `12bis`), ranges kept (`12-14`);
//! - unit: designator abbreviated (USPS Publication 28 App. C2), `#` kept (`# 4b`);
//! - postcode: upper-case, normalized per country ([`normalize_postcode`]);
//! - city: [`clean_text`]; region: [`clean_text`], US state and Canadian province
//!   names replaced by their two-letter codes (lower case).
//!
//! Street types: USPS Publication 28 App. C1 for English-speaking countries (and when
//! the country is unknown) on the last word of the street name (`Main Street` →
//! `main st`) plus directionals (`North` → `n`, unless the directional is the name
//! itself: `North Avenue` → `north ave`); German `straße`/`strasse`/`str.` → `str`
//! also inside compounds (`Hauptstraße` → `hauptstr`); French and Spanish types on the
//! first word (`avenue` → `av`, `boulevard` → `bd`, `calle` → `c`, from memory, common
//! practice).
//!
//! House numbers come first in English-speaking and French-speaking countries
//! (`12 Main Street`, `12 bis rue de la Paix`) and last elsewhere in Europe and Latin
//! America (`Hauptstraße 12a`, `Calle Mayor 10`); outside English-speaking countries
//! the other position is tried when the usual one has no number (`12 Hauptstraße`), and
//! with an unknown country a leading number is tried first. Ordinals (`5th Avenue`) and post-office
//! boxes are never split.

use super::text::{clean_text, clean_text_keep};
use super::Cleaned;

/// USPS Publication 28 App. C1 street suffixes (docs/methods.md §9) and common variants.
const EN_SUFFIXES: &[(&str, &str)] = &[
    ("alley", "aly"),
    ("avenue", "ave"),
    ("av", "ave"),
    ("aven", "ave"),
    ("avenu", "ave"),
    ("avn", "ave"),
    ("avnue", "ave"),
    ("boulevard", "blvd"),
    ("boul", "blvd"),
    ("center", "ctr"),
    ("centre", "ctr"),
    ("circle", "cir"),
    ("court", "ct"),
    ("cove", "cv"),
    ("creek", "crk"),
    ("crossing", "xing"),
    ("drive", "dr"),
    ("drv", "dr"),
    ("expressway", "expy"),
    ("freeway", "fwy"),
    ("heights", "hts"),
    ("highway", "hwy"),
    ("lane", "ln"),
    ("parkway", "pkwy"),
    ("place", "pl"),
    ("plaza", "plz"),
    ("point", "pt"),
    ("ridge", "rdg"),
    ("road", "rd"),
    ("route", "rte"),
    ("square", "sq"),
    ("street", "st"),
    ("strt", "st"),
    ("terrace", "ter"),
    ("trail", "trl"),
    ("turnpike", "tpke"),
];

/// USPS Publication 28 directionals (docs/methods.md §9).
const DIRECTIONALS: &[(&str, &str)] = &[
    ("north", "n"),
    ("south", "s"),
    ("east", "e"),
    ("west", "w"),
    ("northeast", "ne"),
    ("northwest", "nw"),
    ("southeast", "se"),
    ("southwest", "sw"),
];

/// USPS Publication 28 App. C2 secondary unit designators (docs/methods.md §9), plus a few
/// German/French/Spanish words (common practice, no source).
const UNITS: &[(&str, &str)] = &[
    ("apartment", "apt"),
    ("apt", "apt"),
    ("basement", "bsmt"),
    ("building", "bldg"),
    ("bldg", "bldg"),
    ("department", "dept"),
    ("dept", "dept"),
    ("floor", "fl"),
    ("fl", "fl"),
    ("hangar", "hngr"),
    ("office", "ofc"),
    ("ofc", "ofc"),
    ("penthouse", "ph"),
    ("room", "rm"),
    ("rm", "rm"),
    ("space", "spc"),
    ("suite", "ste"),
    ("ste", "ste"),
    ("trailer", "trlr"),
    ("unit", "unit"),
    ("lot", "lot"),
    ("#", "#"),
    ("wohnung", "whg"),
    ("whg", "whg"),
    ("appartement", "apt"),
    ("appt", "apt"),
    ("piso", "piso"),
];

const FR_TYPES: &[(&str, &str)] = &[
    ("avenue", "av"),
    ("boulevard", "bd"),
    ("place", "pl"),
    ("route", "rte"),
    ("chemin", "ch"),
    ("impasse", "imp"),
    ("allée", "all"),
    ("faubourg", "fg"),
];

const ES_TYPES: &[(&str, &str)] = &[
    ("calle", "c"),
    ("avenida", "av"),
    ("plaza", "pl"),
    ("carretera", "ctra"),
    ("paseo", "ps"),
];

/// How a country writes street lines.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Style {
    /// House number first, English street types.
    English,
    /// House number first, French street types.
    French,
    /// House number last, German street types.
    German,
    /// House number last, Spanish street types.
    Spanish,
    /// House number last, no type table.
    Trailing,
    /// Unknown country.
    Unknown,
}

fn style(country: Option<&str>) -> Style {
    match country {
        Some("US" | "CA" | "GB" | "IE" | "AU" | "NZ" | "PR") => Style::English,
        Some("FR" | "BE" | "LU" | "MC") => Style::French,
        Some("DE" | "AT" | "CH" | "LI") => Style::German,
        Some(
            "ES" | "MX" | "AR" | "CO" | "CL" | "PE" | "VE" | "EC" | "GT" | "CU" | "BO" | "DO"
            | "HN" | "PY" | "SV" | "NI" | "CR" | "PA" | "UY",
        ) => Style::Spanish,
        Some(_) => Style::Trailing,
        None => Style::Unknown,
    }
}

fn lookup(table: &[(&str, &'static str)], word: &str) -> Option<&'static str> {
    table.iter().find(|(k, _)| *k == word).map(|(_, v)| *v)
}

/// A street line split into its parts.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct StreetParts {
    /// Street name with standardized type, without number and unit.
    pub street: Option<String>,
    /// House number found in the line.
    pub house_number: Option<String>,
    /// Unit found in the line.
    pub unit: Option<String>,
}

fn is_ordinal(w: &str) -> bool {
    let digits = w.bytes().take_while(u8::is_ascii_digit).count();
    digits > 0 && matches!(&w[digits..], "st" | "nd" | "rd" | "th")
}

/// A house-number word: digits, optionally one letter (`12a`) or a range (`12-14`).
fn is_number_word(w: &str) -> bool {
    let b = w.as_bytes();
    let digits = b.iter().take_while(|c| c.is_ascii_digit()).count();
    if digits == 0 || is_ordinal(w) {
        return false;
    }
    let rest = &w[digits..];
    rest.is_empty()
        || (rest.len() == 1 && rest.as_bytes()[0].is_ascii_lowercase())
        || matches!(rest, "bis" | "ter" | "quater")
        || (rest.starts_with('-')
            && rest.len() > 1
            && rest[1..].bytes().all(|c| c.is_ascii_alphanumeric()))
}

/// A word that continues a house number: `12 a`, `12 bis`.
fn is_number_suffix(w: &str, style: Style) -> bool {
    if matches!(w, "bis" | "ter" | "quater") {
        return true;
    }
    style != Style::English
        && w.len() == 1
        && w.as_bytes()[0].is_ascii_lowercase()
        && !matches!(w, "n" | "s" | "e" | "w" | "y")
}

fn is_po_box(words: &[&str]) -> bool {
    matches!(
        words,
        ["po", "box", ..]
            | ["p", "o", "box", ..]
            | ["pobox", ..]
            | ["post", "office", "box", ..]
            | ["postfach", ..]
            | ["bp", ..]
            | ["apartado", ..]
    )
}

/// Number of words of a leading house number (`12`, `12 a`, `12 bis`), if any.
fn leading_len(words: &[&str], style: Style) -> Option<usize> {
    if words.len() < 2 || !is_number_word(words[0]) {
        return None;
    }
    Some(if words.len() >= 3 && is_number_suffix(words[1], style) {
        2
    } else {
        1
    })
}

/// Number of words of a trailing house number, if any.
fn trailing_len(words: &[&str], style: Style) -> Option<usize> {
    let n = words.len();
    if n >= 3 && is_number_word(words[n - 2]) && is_number_suffix(words[n - 1], style) {
        Some(2)
    } else if n >= 2 && is_number_word(words[n - 1]) {
        Some(1)
    } else {
        None
    }
}

/// Whether the rest of the line still holds a house number that [`parse_street`] would
/// take (`12 3 Mile Rd`): then which one is the house number is unclear, and a second
/// pass would split again, so nothing is split.
fn another_number(rest: &[&str], style: Style) -> bool {
    leading_len(rest, style).is_some()
        || (style != Style::English && trailing_len(rest, style).is_some())
}

fn take_leading(words: &mut Vec<&str>, style: Style) -> Option<String> {
    let k = leading_len(words, style)?;
    if another_number(&words[k..], style) {
        return None;
    }
    Some(words.drain(..k).collect())
}

fn take_trailing(words: &mut Vec<&str>, style: Style) -> Option<String> {
    let k = trailing_len(words, style)?;
    let n = words.len();
    if another_number(&words[..n - k], style) {
        return None;
    }
    Some(words.drain(n - k..).collect())
}

fn take_unit(words: &mut Vec<&str>) -> Option<String> {
    // A designator followed by an identifier, not at the start of the line.
    let pos = (1..words.len().saturating_sub(1)).find(|&i| {
        let id = words[i + 1];
        lookup(UNITS, words[i]).is_some()
            && (id.bytes().any(|b| b.is_ascii_digit()) || id.chars().count() == 1)
    })?;
    let designator = lookup(UNITS, words[pos]).unwrap_or("#");
    let unit = std::iter::once(designator)
        .chain(words[pos + 1..].iter().copied())
        .collect::<Vec<_>>()
        .join(" ");
    words.truncate(pos);
    Some(unit)
}

/// `strasse` (alone or at the end of a word) → `str`, in place.
fn german_type(w: &mut String) {
    if w.ends_with("strasse") {
        w.truncate(w.len() - "asse".len());
    }
}

fn directional(w: &str) -> Option<&'static str> {
    lookup(DIRECTIONALS, w).or_else(|| DIRECTIONALS.iter().find(|(_, a)| *a == w).map(|(_, a)| *a))
}

fn abbreviate(words: &mut [String], style: Style) {
    let n = words.len();
    if n == 0 {
        return;
    }
    for w in words.iter_mut() {
        german_type(w);
    }
    match style {
        Style::English | Style::Unknown => {
            // [pre-directional] name... [suffix] [post-directional]
            let mut end = n;
            if n >= 3 {
                if let Some(a) = directional(&words[n - 1]) {
                    words[n - 1] = a.to_string();
                    end = n - 1;
                }
            }
            let mut name_end = end;
            if end >= 2 {
                if let Some(a) = lookup(EN_SUFFIXES, &words[end - 1]) {
                    words[end - 1] = a.to_string();
                    name_end = end - 1;
                }
            }
            // A pre-directional, unless it is the street name itself ("North Avenue").
            if name_end >= 2 {
                if let Some(a) = directional(&words[0]) {
                    words[0] = a.to_string();
                }
            }
        }
        Style::French if n >= 2 => {
            if let Some(a) = lookup(FR_TYPES, &words[0]) {
                words[0] = a.to_string();
            }
        }
        Style::Spanish if n >= 2 => {
            if let Some(a) = lookup(ES_TYPES, &words[0]) {
                words[0] = a.to_string();
            }
        }
        _ => {}
    }
}

/// Split and standardize a street line (rules in the module doc).
pub fn parse_street(raw: &str, country: Option<&str>) -> StreetParts {
    let cleaned = clean_text_keep(raw, &['#']);
    let mut words: Vec<&str> = cleaned.split(' ').filter(|w| !w.is_empty()).collect();
    if words.is_empty() {
        return StreetParts::default();
    }
    let st = style(country);
    if is_po_box(&words) {
        let number: Vec<&str> = words
            .iter()
            .copied()
            .skip_while(|w| !w.bytes().any(|b| b.is_ascii_digit()))
            .collect();
        let street = if number.is_empty() {
            cleaned.clone()
        } else {
            format!("po box {}", number.join(" "))
        };
        return StreetParts {
            street: Some(street),
            ..StreetParts::default()
        };
    }
    let unit = take_unit(&mut words);
    let house_number = match st {
        // "Route 66": a trailing number is no house number in English addresses.
        Style::English => take_leading(&mut words, st),
        Style::French | Style::Unknown => {
            take_leading(&mut words, st).or_else(|| take_trailing(&mut words, st))
        }
        Style::German | Style::Spanish | Style::Trailing => {
            take_trailing(&mut words, st).or_else(|| take_leading(&mut words, st))
        }
    };
    let mut owned: Vec<String> = words.iter().map(|w| w.to_string()).collect();
    abbreviate(&mut owned, st);
    let street = owned.join(" ");
    StreetParts {
        street: (!street.is_empty()).then_some(street),
        house_number,
        unit,
    }
}

/// Standardize a house-number value: `12 A` → `12a`, `12 bis` → `12bis`.
pub fn normalize_house_number(raw: &str) -> Cleaned {
    let cleaned = clean_text(raw);
    if !cleaned.bytes().any(|b| b.is_ascii_digit()) {
        return Cleaned::Invalid;
    }
    let mut out = String::with_capacity(cleaned.len());
    let words: Vec<&str> = cleaned.split(' ').collect();
    for (i, w) in words.iter().enumerate() {
        let join = i > 0
            && words[i - 1]
                .bytes()
                .last()
                .is_some_and(|b| b.is_ascii_digit())
            && (w.chars().count() == 1 && w.chars().all(char::is_alphabetic)
                || matches!(*w, "bis" | "ter" | "quater"));
        if i > 0 && !join {
            out.push(' ');
        }
        out.push_str(w);
    }
    if out == raw.trim() {
        Cleaned::Parsed(out)
    } else {
        Cleaned::Repaired(out)
    }
}

/// Standardize a unit value: designator abbreviated, `#` kept as its own word.
pub fn normalize_unit(raw: &str) -> Cleaned {
    let cleaned = clean_text_keep(raw, &['#']);
    if cleaned.is_empty() {
        return Cleaned::Invalid;
    }
    let mut words: Vec<&str> = cleaned.split(' ').collect();
    if let Some(a) = lookup(UNITS, words[0]) {
        words[0] = a;
    }
    let out = words.join(" ");
    if out == raw.trim() {
        Cleaned::Parsed(out)
    } else {
        Cleaned::Repaired(out)
    }
}

/// Standardize a city name ([`clean_text`]).
pub fn normalize_city(raw: &str) -> Cleaned {
    let out = clean_text(raw);
    if out.is_empty() {
        Cleaned::Invalid
    } else {
        Cleaned::Parsed(out)
    }
}

/// USPS two-letter state codes (Publication 28 App. B, from memory) and Canada Post
/// province codes (from memory).
const REGIONS: &[(&str, &str)] = &[
    ("alabama", "al"),
    ("alaska", "ak"),
    ("arizona", "az"),
    ("arkansas", "ar"),
    ("california", "ca"),
    ("colorado", "co"),
    ("connecticut", "ct"),
    ("delaware", "de"),
    ("district of columbia", "dc"),
    ("florida", "fl"),
    ("georgia", "ga"),
    ("hawaii", "hi"),
    ("idaho", "id"),
    ("illinois", "il"),
    ("indiana", "in"),
    ("iowa", "ia"),
    ("kansas", "ks"),
    ("kentucky", "ky"),
    ("louisiana", "la"),
    ("maine", "me"),
    ("maryland", "md"),
    ("massachusetts", "ma"),
    ("michigan", "mi"),
    ("minnesota", "mn"),
    ("mississippi", "ms"),
    ("missouri", "mo"),
    ("montana", "mt"),
    ("nebraska", "ne"),
    ("nevada", "nv"),
    ("new hampshire", "nh"),
    ("new jersey", "nj"),
    ("new mexico", "nm"),
    ("new york", "ny"),
    ("north carolina", "nc"),
    ("north dakota", "nd"),
    ("ohio", "oh"),
    ("oklahoma", "ok"),
    ("oregon", "or"),
    ("pennsylvania", "pa"),
    ("rhode island", "ri"),
    ("south carolina", "sc"),
    ("south dakota", "sd"),
    ("tennessee", "tn"),
    ("texas", "tx"),
    ("utah", "ut"),
    ("vermont", "vt"),
    ("virginia", "va"),
    ("washington", "wa"),
    ("west virginia", "wv"),
    ("wisconsin", "wi"),
    ("wyoming", "wy"),
    ("puerto rico", "pr"),
    ("alberta", "ab"),
    ("british columbia", "bc"),
    ("manitoba", "mb"),
    ("new brunswick", "nb"),
    ("newfoundland and labrador", "nl"),
    ("nova scotia", "ns"),
    ("ontario", "on"),
    ("prince edward island", "pe"),
    ("quebec", "qc"),
    ("québec", "qc"),
    ("saskatchewan", "sk"),
    ("northwest territories", "nt"),
    ("nunavut", "nu"),
    ("yukon", "yt"),
];

/// Standardize a region: [`clean_text`]; in the US, Canada or an unknown country, state
/// and province names become their codes (`California` → `ca`).
pub fn normalize_region(raw: &str, country: Option<&str>) -> Cleaned {
    let out = clean_text(raw);
    if out.is_empty() {
        return Cleaned::Invalid;
    }
    if matches!(country, None | Some("US" | "CA" | "PR")) {
        if let Some(code) = lookup(REGIONS, &out) {
            return Cleaned::Repaired(code.to_string());
        }
    }
    Cleaned::Parsed(out)
}

fn collapse_upper(raw: &str) -> String {
    raw.split_whitespace()
        .collect::<Vec<_>>()
        .join(" ")
        .to_uppercase()
}

/// Standardize a postcode for `country`:
/// - US: ZIP5 (`12345-6789` → `12345`, nine digits → first five, 3-4 digits → leading
///   zeros restored: values stored as numbers lost them);
/// - DE, FR, ES, IT, FI, MX: five digits, leading zero restored for four; a `D-`/`F-`
///   style country prefix is removed;
/// - AT, CH, BE, DK, NO, LU, HU, AU, NZ: four digits;
/// - GB: outward and inward code separated by one space (`SW1A1AA` → `SW1A 1AA`);
/// - CA: `A1A 1A1`; NL: `1234 AB`; PL: `12-345`;
/// - elsewhere (and unknown country): upper case, letters, digits and single spaces.
///
/// A trailing `.0` after digits (a number exported as float) is removed.
pub fn normalize_postcode(raw: &str, country: Option<&str>) -> Cleaned {
    let mut s = raw.trim();
    if let Some(stripped) = s.strip_suffix(".0") {
        if !stripped.is_empty() && stripped.bytes().all(|b| b.is_ascii_digit()) {
            s = stripped;
        }
    }
    let upper = s.to_uppercase();
    let mut body: &str = &upper;
    if let Some(c) = country {
        let one = c.get(..1).unwrap_or(c);
        for prefix in [c, one] {
            if let Some(rest) = body.strip_prefix(prefix).and_then(|r| r.strip_prefix('-')) {
                body = rest;
                break;
            }
        }
    }
    let compact: String = body.chars().filter(|c| c.is_alphanumeric()).collect();
    let all_digits = !compact.is_empty() && compact.bytes().all(|b| b.is_ascii_digit());
    let out: Option<String> = match country {
        Some("US" | "PR") if all_digits => match compact.len() {
            5 => Some(compact),
            9 => Some(compact[..5].to_string()),
            3 | 4 => Some(format!("{compact:0>5}")),
            _ => None,
        },
        Some("US" | "PR") => None,
        Some("DE" | "FR" | "ES" | "IT" | "FI" | "MX") => match compact.len() {
            5 if all_digits => Some(compact),
            4 if all_digits => Some(format!("0{compact}")),
            _ => None,
        },
        Some("AT" | "CH" | "BE" | "DK" | "NO" | "LU" | "HU" | "AU" | "NZ") => {
            (all_digits && compact.len() == 4).then_some(compact)
        }
        Some("GB") => gb_postcode(&compact),
        Some("CA") => {
            let b = compact.as_bytes();
            let ok = b.len() == 6
                && b.iter().enumerate().all(|(i, c)| {
                    if i % 2 == 0 {
                        c.is_ascii_uppercase()
                    } else {
                        c.is_ascii_digit()
                    }
                });
            ok.then(|| format!("{} {}", &compact[..3], &compact[3..]))
        }
        Some("NL") => {
            let b = compact.as_bytes();
            let ok = b.len() == 6
                && b[..4].iter().all(u8::is_ascii_digit)
                && b[4..].iter().all(u8::is_ascii_uppercase);
            ok.then(|| format!("{} {}", &compact[..4], &compact[4..]))
        }
        Some("PL") => (all_digits && compact.len() == 5)
            .then(|| format!("{}-{}", &compact[..2], &compact[2..])),
        _ => {
            let generic: String = body
                .chars()
                .map(|c| if c.is_alphanumeric() { c } else { ' ' })
                .collect();
            let generic = collapse_upper(&generic);
            (!generic.is_empty()).then_some(generic)
        }
    };
    match out {
        None => Cleaned::Invalid,
        Some(v) if v == collapse_upper(raw) => Cleaned::Parsed(v),
        Some(v) => Cleaned::Repaired(v),
    }
}

/// UK postcode: outward code (2-4 characters, starting with a letter) and inward code
/// (digit, letter, letter), one space between (Royal Mail format, common practice).
fn gb_postcode(compact: &str) -> Option<String> {
    let b = compact.as_bytes();
    if !(5..=7).contains(&b.len()) || !b.iter().all(u8::is_ascii_alphanumeric) {
        return None;
    }
    let (out, inw) = compact.split_at(b.len() - 3);
    let ib = inw.as_bytes();
    let inward_ok =
        ib[0].is_ascii_digit() && ib[1].is_ascii_uppercase() && ib[2].is_ascii_uppercase();
    let outward_ok = out.as_bytes()[0].is_ascii_uppercase();
    (inward_ok && outward_ok).then(|| format!("{out} {inw}"))
}

/// The country a postcode's shape belongs to, when only one country writes postcodes
/// that way: UK (`SW1A 1AA`, Royal Mail PAF format), Canada (`K1A 0B6`, Canada Post),
/// the Netherlands (`1234 AB`, PostNL), Poland (`00-950`), Portugal (`1000-001`),
/// Japan (`100-0001`), Brazil (`01310-100`) and the US ZIP+4 (`20500-0003`). Digits-only
/// postcodes (most countries) say nothing. Case and spacing are ignored.
pub fn country_of_postcode_shape(raw: &str) -> Option<&'static str> {
    let mut shape = String::with_capacity(raw.len());
    for c in raw.trim().chars() {
        match c {
            'a'..='z' | 'A'..='Z' => shape.push('A'),
            '0'..='9' => shape.push('9'),
            ' ' => {
                if !shape.ends_with(' ') {
                    shape.push(' ');
                }
            }
            '-' => shape.push('-'),
            _ => return None,
        }
    }
    const UK: &[&str] = &[
        "A9 9AA", "A99 9AA", "AA9 9AA", "AA99 9AA", "A9A 9AA", "AA9A 9AA",
    ];
    let compact = shape.replace(' ', "");
    if UK
        .iter()
        .any(|s| *s == shape || s.replace(' ', "") == compact)
    {
        return Some("GB");
    }
    match shape.as_str() {
        "A9A 9A9" | "A9A9A9" => Some("CA"),
        "9999 AA" | "9999AA" => Some("NL"),
        "99-999" => Some("PL"),
        "9999-999" => Some("PT"),
        "999-9999" => Some("JP"),
        "99999-999" => Some("BR"),
        "99999-9999" => Some("US"),
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn check(raw: &str, country: Option<&str>, street: &str, hn: &str, unit: &str) {
        let p = parse_street(raw, country);
        let got = (
            p.street.unwrap_or_default(),
            p.house_number.unwrap_or_default(),
            p.unit.unwrap_or_default(),
        );
        assert_eq!(
            (got.0.as_str(), got.1.as_str(), got.2.as_str()),
            (street, hn, unit),
            "{raw}"
        );
    }

    #[test]
    fn usps_suffixes_and_house_numbers() {
        // USPS Publication 28 App. C1 (docs/methods.md §9): STREET->ST, AVENUE->AVE,
        // ROAD->RD, BOULEVARD->BLVD, PARKWAY->PKWY; directionals NORTH->N.
        check("12 Main Street", Some("US"), "main st", "12", "");
        check(
            "1600 Pennsylvania Avenue NW",
            Some("US"),
            "pennsylvania ave nw",
            "1600",
            "",
        );
        check("350 Fifth Avenue", Some("US"), "fifth ave", "350", "");
        check("12 5th Ave.", Some("US"), "5th ave", "12", "");
        check("77 North Oak Road", Some("US"), "n oak rd", "77", "");
        check("5 North Avenue", Some("US"), "north ave", "5", "");
        check("9 Sunset Boulevard", Some("US"), "sunset blvd", "9", "");
        check(
            "10 Blue Ridge Parkway",
            Some("US"),
            "blue ridge pkwy",
            "10",
            "",
        );
        check("4 Loop", Some("US"), "loop", "4", "");
        check("Route 66", Some("US"), "route 66", "", "");
        check("12 Route 66", Some("US"), "route 66", "12", "");
        // Two candidate numbers: nothing is split.
        check("12 3 Mile Road", Some("US"), "12 3 mile rd", "", "");
    }

    #[test]
    fn usps_units() {
        // USPS Publication 28 App. C2 (docs/methods.md §9): APARTMENT->APT, SUITE->STE,
        // FLOOR->FL; '#' when the designator is unknown.
        check("123 Main St Apt 4B", Some("US"), "main st", "123", "apt 4b");
        check(
            "500 Market Street Suite 200",
            Some("US"),
            "market st",
            "500",
            "ste 200",
        );
        check(
            "500 Market Street, Floor 3",
            Some("US"),
            "market st",
            "500",
            "fl 3",
        );
        check("8 Elm St #12", Some("US"), "elm st", "8", "# 12");
        assert_eq!(
            normalize_unit("Apartment 4B"),
            Cleaned::Repaired("apt 4b".into())
        );
        assert_eq!(normalize_unit("#12"), Cleaned::Repaired("# 12".into()));
        assert_eq!(
            normalize_unit("Suite 200"),
            Cleaned::Repaired("ste 200".into())
        );
    }

    #[test]
    fn german_and_french_streets() {
        // German: Straße/Strasse/Str. one token, compounds split (docs/methods.md §9).
        check("Hauptstraße 12a", Some("DE"), "hauptstr", "12a", "");
        check("Hauptstrasse 12 a", Some("DE"), "hauptstr", "12a", "");
        check("Hauptstr. 12", Some("DE"), "hauptstr", "12", "");
        check("Berliner Straße 5-7", Some("DE"), "berliner str", "5-7", "");
        check(
            "Konrad-Adenauer-Straße 1",
            Some("DE"),
            "konrad-adenauer-str",
            "1",
            "",
        );
        // French (common practice, no source): number first, avenue -> av.
        check(
            "12 bis rue de la Paix",
            Some("FR"),
            "rue de la paix",
            "12bis",
            "",
        );
        check(
            "5 Avenue des Champs-Élysées",
            Some("FR"),
            "av des champs-élysées",
            "5",
            "",
        );
        check("Calle Mayor 10", Some("ES"), "c mayor", "10", "");
        // The other position is the fallback outside English-speaking countries.
        check("12 Hauptstraße", Some("DE"), "hauptstr", "12", "");
        check("rue de la Paix 12", Some("FR"), "rue de la paix", "12", "");
        // Unknown country: leading number first, then trailing.
        check("12 Main Street", None, "main st", "12", "");
        check("Hauptstraße 12a", None, "hauptstr", "12a", "");
        check("PO Box 123", Some("US"), "po box 123", "", "");
        check("P.O. Box 77", None, "po box 77", "", "");
    }

    #[test]
    fn house_numbers() {
        assert_eq!(
            normalize_house_number("12 A"),
            Cleaned::Repaired("12a".into())
        );
        assert_eq!(normalize_house_number("12"), Cleaned::Parsed("12".into()));
        assert_eq!(
            normalize_house_number("12 bis"),
            Cleaned::Repaired("12bis".into())
        );
        assert_eq!(
            normalize_house_number("12-14"),
            Cleaned::Parsed("12-14".into())
        );
        assert_eq!(normalize_house_number("s/n"), Cleaned::Invalid);
    }

    #[test]
    fn postcodes() {
        // USPS: ZIP+4 -> ZIP5; leading zeros restored (02134 is Boston, from memory).
        assert_eq!(
            normalize_postcode("12345-6789", Some("US")),
            Cleaned::Repaired("12345".into())
        );
        assert_eq!(
            normalize_postcode("123456789", Some("US")),
            Cleaned::Repaired("12345".into())
        );
        assert_eq!(
            normalize_postcode("2134", Some("US")),
            Cleaned::Repaired("02134".into())
        );
        assert_eq!(
            normalize_postcode("2134.0", Some("US")),
            Cleaned::Repaired("02134".into())
        );
        assert_eq!(
            normalize_postcode("10001", Some("US")),
            Cleaned::Parsed("10001".into())
        );
        assert_eq!(normalize_postcode("ABCDE", Some("US")), Cleaned::Invalid);
        // Deutsche Post: 01067 Dresden stored as 1067 (from memory).
        assert_eq!(
            normalize_postcode("1067", Some("DE")),
            Cleaned::Repaired("01067".into())
        );
        assert_eq!(
            normalize_postcode("D-10115", Some("DE")),
            Cleaned::Repaired("10115".into())
        );
        assert_eq!(
            normalize_postcode("75 001", Some("FR")),
            Cleaned::Repaired("75001".into())
        );
        assert_eq!(
            normalize_postcode("8001", Some("ES")),
            Cleaned::Repaired("08001".into())
        );
        // Royal Mail: SW1A 1AA (from memory); outward/inward spacing restored.
        assert_eq!(
            normalize_postcode("SW1A1AA", Some("GB")),
            Cleaned::Repaired("SW1A 1AA".into())
        );
        assert_eq!(
            normalize_postcode("sw1a 1aa", Some("GB")),
            Cleaned::Parsed("SW1A 1AA".into())
        );
        assert_eq!(
            normalize_postcode("M1 1AE", Some("GB")),
            Cleaned::Parsed("M1 1AE".into())
        );
        assert_eq!(normalize_postcode("12345", Some("GB")), Cleaned::Invalid);
        assert_eq!(
            normalize_postcode("k1a0b1", Some("CA")),
            Cleaned::Repaired("K1A 0B1".into())
        );
        assert_eq!(
            normalize_postcode("1012ab", Some("NL")),
            Cleaned::Repaired("1012 AB".into())
        );
        assert_eq!(
            normalize_postcode("8001", Some("CH")),
            Cleaned::Parsed("8001".into())
        );
        assert_eq!(
            normalize_postcode(" ab-12 ", None),
            Cleaned::Repaired("AB 12".into())
        );
    }

    #[test]
    fn regions_and_cities() {
        assert_eq!(
            normalize_region("California", Some("US")),
            Cleaned::Repaired("ca".into())
        );
        assert_eq!(
            normalize_region("NY", Some("US")),
            Cleaned::Parsed("ny".into())
        );
        assert_eq!(
            normalize_region("Bayern", Some("DE")),
            Cleaned::Parsed("bayern".into())
        );
        assert_eq!(
            normalize_city("St. Louis"),
            Cleaned::Parsed("st louis".into())
        );
        assert_eq!(normalize_city("München"), Cleaned::Parsed("münchen".into()));
        assert_eq!(normalize_city(" - "), Cleaned::Invalid);
    }

    #[test]
    fn postcode_shapes_that_name_one_country() {
        // Formats: Royal Mail (UK), Canada Post, PostNL, Poczta Polska, CTT (Portugal),
        // Japan Post, Correios (Brazil), USPS ZIP+4; examples are the postal services'
        // published ones as remembered (SW1A 1AA, K1A 0B1, 1012 AB, 00-950, 1000-001,
        // 100-0001, 01310-100, 20500-0003).
        for (raw, want) in [
            ("SW1A 1AA", "GB"),
            ("sw1a1aa", "GB"),
            ("M1 1AE", "GB"),
            ("K1A 0B1", "CA"),
            ("1012 AB", "NL"),
            ("00-950", "PL"),
            ("1000-001", "PT"),
            ("100-0001", "JP"),
            ("01310-100", "BR"),
            ("20500-0003", "US"),
        ] {
            assert_eq!(country_of_postcode_shape(raw), Some(want), "{raw}");
        }
        // Digits only: many countries.
        for raw in ["75008", "10115", "28013", "1010", "", "SW1A-1AA!"] {
            assert_eq!(country_of_postcode_shape(raw), None, "{raw}");
        }
    }
}
