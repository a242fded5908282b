//! Agreement levels: the spec's words for "how well two values agree", parsed from text
//! and checked against the attribute they are declared on.

use std::fmt;

use crate::record::Attr;

/// Level code of a comparison where one side is missing: skipped by the likelihood and
/// neutral (0) in the weight. Every other code is an index into the attribute's levels.
pub const MISSING_LEVEL: u8 = u8::MAX;

/// An agreement level of a comparison, best first.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Level {
    /// Standardized values are equal.
    Exact,
    /// Equal after transliteration (ü = ue = u, ß = ss, é = e).
    Translit,
    /// Nickname or diminutive of each other (Bill = William).
    Nickname,
    /// One value is an initial of the other (J = John).
    Initial,
    /// Same American Soundex code.
    Soundex,
    /// E-mail addresses with the same local part on another domain.
    LocalPart,
    /// The values share a word (double family names, company names).
    AnyToken,
    /// Symmetric Monge–Elkan similarity over words (Jaro–Winkler inside) at least x.
    MongeElkan(f64),
    /// Jaro–Winkler similarity at least the threshold.
    JaroWinkler(f64),
    /// Jaro similarity at least the threshold.
    Jaro(f64),
    /// Levenshtein distance at most the bound.
    Levenshtein(u32),
    /// Dates equal after swapping day and month.
    DateSwap,
    /// Dates differ in exactly one digit.
    DateOneDigit,
    /// Dates share the year.
    SameYear,
    /// Given and family name swapped: this attribute's value equals the other name
    /// attribute's value of the other record, and (when both are present) the other
    /// way round, after ASCII folding. Only on given_name and family_name.
    Swapped,
    /// The words of one value are a proper subset of the other's (`maría josé` and
    /// `maría`, `garcía lópez` and `garcía`), after ASCII folding.
    Subset,
    /// Phones: the same number, valid by the numbering plan (`verified`).
    Verified,
    /// Phones: the same national significant number under another country code, or one
    /// side without a country code (`national_number`).
    NationalNumber,
    /// Dates: one side lacks the year (`--05-17`) or the day (`1980-05`), and the two
    /// agree on every part both hold (`partial`).
    Partial,
}

impl fmt::Display for Level {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Level::Exact => f.write_str("exact"),
            Level::Translit => f.write_str("translit"),
            Level::Nickname => f.write_str("nickname"),
            Level::Initial => f.write_str("initial"),
            Level::Soundex => f.write_str("soundex"),
            Level::LocalPart => f.write_str("local_part"),
            Level::AnyToken => f.write_str("any_token"),
            Level::MongeElkan(t) => write!(f, "monge_elkan >= {t}"),
            Level::JaroWinkler(t) => write!(f, "jaro_winkler >= {t}"),
            Level::Jaro(t) => write!(f, "jaro >= {t}"),
            Level::Levenshtein(k) => write!(f, "levenshtein <= {k}"),
            Level::DateSwap => f.write_str("date_swap"),
            Level::DateOneDigit => f.write_str("date_one_digit"),
            Level::SameYear => f.write_str("same_year"),
            Level::Swapped => f.write_str("swapped"),
            Level::Subset => f.write_str("subset"),
            Level::Verified => f.write_str("verified"),
            Level::NationalNumber => f.write_str("national_number"),
            Level::Partial => f.write_str("partial"),
        }
    }
}

/// The levels as a spec writes them, for messages.
pub const LEVEL_HELP: &str = "exact, translit, nickname, initial, soundex, local_part, any_token, \
     swapped, subset, \"jaro_winkler >= 0.9\", \"jaro >= 0.9\", \"monge_elkan >= 0.9\", \
     \"levenshtein <= 2\", date_swap, date_one_digit, same_year, partial, verified, \
     national_number";

/// Most levels one attribute may declare (the implicit `disagree` not counted).
pub const MAX_DECLARED_LEVELS: usize = 12;

impl Level {
    /// Parse a level as written in the spec.
    pub fn parse(s: &str) -> std::result::Result<Level, String> {
        let t = s.trim();
        let simple = match t {
            "exact" => Some(Level::Exact),
            "translit" => Some(Level::Translit),
            "nickname" => Some(Level::Nickname),
            "initial" => Some(Level::Initial),
            "soundex" => Some(Level::Soundex),
            "local_part" => Some(Level::LocalPart),
            "any_token" => Some(Level::AnyToken),
            "date_swap" => Some(Level::DateSwap),
            "date_one_digit" => Some(Level::DateOneDigit),
            "same_year" => Some(Level::SameYear),
            "swapped" => Some(Level::Swapped),
            "subset" => Some(Level::Subset),
            "verified" => Some(Level::Verified),
            "national_number" => Some(Level::NationalNumber),
            "partial" => Some(Level::Partial),
            _ => None,
        };
        if let Some(l) = simple {
            return Ok(l);
        }
        let bad = || format!("`{t}` is not a level; allowed: {LEVEL_HELP}");
        if let Some((name, rest)) = t.split_once(">=") {
            let make: fn(f64) -> Level = match name.trim() {
                "jaro_winkler" => Level::JaroWinkler,
                "jaro" => Level::Jaro,
                "monge_elkan" => Level::MongeElkan,
                _ => return Err(bad()),
            };
            let x: f64 = rest.trim().parse().map_err(|_| bad())?;
            if !(0.0..=1.0).contains(&x) {
                return Err(format!("`{t}`: the threshold must be between 0 and 1"));
            }
            return Ok(make(x));
        }
        if let Some((name, rest)) = t.split_once("<=") {
            let k: u32 = rest.trim().parse().map_err(|_| bad())?;
            return match name.trim() {
                "levenshtein" if (1..=8).contains(&k) => Ok(Level::Levenshtein(k)),
                "levenshtein" => Err(format!("`{t}`: the bound must be between 1 and 8")),
                _ => Err(bad()),
            };
        }
        Err(bad())
    }

    /// True for levels that only make sense on dates.
    pub fn is_date_level(self) -> bool {
        matches!(
            self,
            Level::DateSwap | Level::DateOneDigit | Level::SameYear | Level::Partial
        )
    }

    /// True for levels that only make sense on phone numbers.
    pub fn is_phone_level(self) -> bool {
        matches!(self, Level::Verified | Level::NationalNumber)
    }

    /// Whether the level can be declared on `attr`; the error says why not.
    pub fn check_applies_to(self, attr: Attr) -> std::result::Result<(), String> {
        if self.is_date_level() && attr != Attr::BirthDate {
            return Err(format!("`{self}` only applies to birth_date"));
        }
        if self == Level::LocalPart && attr != Attr::Email {
            return Err("`local_part` only applies to email".to_string());
        }
        if self.is_phone_level() && attr != Attr::Phone {
            return Err(format!("`{self}` only applies to phone"));
        }
        if self == Level::Swapped && !matches!(attr, Attr::GivenName | Attr::FamilyName) {
            return Err("`swapped` only applies to given_name and family_name".to_string());
        }
        Ok(())
    }
}

/// One compared attribute (a `[[compare]]` entry of the spec, validated).
#[derive(Debug, Clone)]
pub struct CompareSpec {
    /// The attribute.
    pub attr: Attr,
    /// Agreement levels, best first; "disagree" and "missing" follow implicitly.
    pub levels: Vec<Level>,
    /// Use value-frequency weights for the exact level.
    pub frequency: bool,
}

impl CompareSpec {
    /// Names of all levels including the implicit `disagree` (missing is not a level).
    pub fn level_names(&self) -> Vec<String> {
        let mut v: Vec<String> = self.levels.iter().map(|l| l.to_string()).collect();
        v.push("disagree".to_string());
        v
    }

    /// Number of levels including `disagree`.
    pub fn n_levels(&self) -> usize {
        self.levels.len() + 1
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn level_display_round_trips() {
        for s in [
            "exact",
            "jaro_winkler >= 0.85",
            "levenshtein <= 2",
            "same_year",
            "swapped",
            "subset",
            "partial",
            "verified",
            "national_number",
        ] {
            assert_eq!(Level::parse(s).unwrap().to_string(), s);
        }
    }

    #[test]
    fn levels_know_their_attributes() {
        assert!(Level::DateSwap.check_applies_to(Attr::BirthDate).is_ok());
        assert!(Level::DateSwap.check_applies_to(Attr::City).is_err());
        assert!(Level::LocalPart.check_applies_to(Attr::Email).is_ok());
        assert!(Level::LocalPart.check_applies_to(Attr::GivenName).is_err());
        assert!(Level::Exact.check_applies_to(Attr::City).is_ok());
        assert!(Level::Swapped.check_applies_to(Attr::FamilyName).is_ok());
        assert!(Level::Swapped.check_applies_to(Attr::City).is_err());
        assert!(Level::Verified.check_applies_to(Attr::Phone).is_ok());
        assert!(Level::NationalNumber.check_applies_to(Attr::Email).is_err());
        assert!(Level::Partial.check_applies_to(Attr::BirthDate).is_ok());
        assert!(Level::Subset.check_applies_to(Attr::Company).is_ok());
    }
}
