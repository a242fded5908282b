//! Country values to ISO 3166-1 alpha-2.
//!
//! In: a country as written (code, name, alias, any case, with or without dots). Out:
//! the upper-case alpha-2 code, or invalid. Known: alpha-2 and alpha-3 codes and
//! English, native and a few other-language names of the countries in
//! `data/countries.tsv` (from memory of ISO 3166-1), aliases such as `UK`, `England`,
//! `USA`, `Deutschland`; and any other alpha-2 code the phone metadata knows.

use std::sync::LazyLock;

use rustc_hash::FxHashMap as HashMap;

use phonenumber::metadata::DATABASE;

use super::text::{clean_text, fold_ascii};
use super::Cleaned;

const COUNTRIES_TSV: &str = include_str!("data/countries.tsv");

static NAMES: LazyLock<HashMap<String, &'static str>> = LazyLock::new(|| {
    let mut map = HashMap::default();
    for line in COUNTRIES_TSV.lines() {
        if line.starts_with('#') || line.trim().is_empty() {
            continue;
        }
        let mut f = line.split('\t');
        let (Some(a2), Some(a3), Some(names)) = (f.next(), f.next(), f.next()) else {
            continue;
        };
        map.insert(a2.to_ascii_lowercase(), a2);
        map.insert(a3.to_ascii_lowercase(), a2);
        for name in names.split('|') {
            let key = lookup_key(name);
            map.insert(key.replace(' ', ""), a2);
            map.insert(key, a2);
        }
    }
    map
});

fn lookup_key(s: &str) -> String {
    if s.contains('-') {
        fold_ascii(&clean_text(&s.replace('-', " ")))
    } else {
        fold_ascii(&clean_text(s))
    }
}

/// The ISO 3166-1 alpha-2 code (upper case) of a country value, if known.
pub fn country_code(raw: &str) -> Option<&'static str> {
    let key = lookup_key(raw);
    if key.is_empty() {
        return None;
    }
    if let Some(code) = NAMES.get(&key).or_else(|| NAMES.get(&key.replace(' ', ""))) {
        return Some(code);
    }
    if key.len() == 2 && key.bytes().all(|b| b.is_ascii_lowercase()) {
        let upper = key.to_ascii_uppercase();
        return DATABASE.by_id(upper.as_str()).map(|m| m.id());
    }
    None
}

/// Standardize a country value to its alpha-2 code.
pub fn normalize_country(raw: &str) -> Cleaned {
    match country_code(raw) {
        Some(code) if raw.trim() == code => Cleaned::Parsed(code.to_string()),
        Some(code) => Cleaned::Repaired(code.to_string()),
        None => Cleaned::Invalid,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn codes_names_and_aliases() {
        // ISO 3166-1 (from memory): US/USA, DE/DEU, GB/GBR, FR/FRA, ES/ESP, CH/CHE.
        for (raw, want) in [
            ("US", "US"),
            ("usa", "US"),
            ("U.S.A.", "US"),
            ("United States", "US"),
            ("United States of America", "US"),
            ("Deutschland", "DE"),
            ("Germany", "DE"),
            ("DEU", "DE"),
            ("United Kingdom", "GB"),
            ("UK", "GB"),
            ("Great Britain", "GB"),
            ("England", "GB"),
            ("GBR", "GB"),
            ("France", "FR"),
            ("España", "ES"),
            ("Österreich", "AT"),
            ("Schweiz", "CH"),
        ] {
            assert_eq!(country_code(raw), Some(want), "{raw}");
        }
        // Alpha-2 codes outside the name table come from the phone metadata.
        assert_eq!(country_code("ci"), Some("CI"));
        assert_eq!(country_code("Atlantis"), None);
        assert_eq!(country_code("ZZ"), None);
        assert_eq!(country_code(""), None);
    }

    #[test]
    fn parsed_versus_repaired() {
        assert_eq!(normalize_country("DE"), Cleaned::Parsed("DE".into()));
        assert_eq!(normalize_country("germany"), Cleaned::Repaired("DE".into()));
        assert_eq!(normalize_country("nowhere"), Cleaned::Invalid);
    }
}
