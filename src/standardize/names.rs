//! Personal names: titles, generational suffixes, particles, full-name splitting.
//!
//! In: raw given, family or full name strings, the source's [`NameOrder`] and the
//! record's country. Out: cleaned names ([`clean_text`] rules, diacritics kept) without
//! titles and suffixes; a full name split into given and family name.
//!
//! Rules (common practice, no source unless stated):
//! - Titles are removed from the start: `Mr Mrs Ms Miss Mx Dr Prof Herr Frau Mme Mlle
//!   Madame Mademoiselle Monsieur Sr Sra Srta Dña Sir Dame Rev`. Two one-letter
//!   abbreviations are ambiguous with initials and are titles only with a period and
//!   in a country that uses them: `M.` (Monsieur) in French-speaking countries, `D.`
//!   (Don) in Spanish-speaking countries. Elsewhere `M.`/`D.` stay as initials.
//! - Generational suffixes and post-nominals are removed from the end of a name part:
//!   `Jr Jnr Junior Sr Snr Senior II III IV PhD Esq`.
//! - `Sr` is both the Spanish title *Señor* and the English suffix *Senior*. Position
//!   decides: first word of a part (with more words after it) = title, last word =
//!   suffix. Both are removed, so the value is the same either way; a name part that is
//!   only `Sr` is kept as it is (nothing is ever removed from a one-word part).
//! - Particles `van von de da del della di du le la der den ter ten dos das zu vom zum
//!   zur st saint y` stay with the family name (`Ludwig van Beethoven` → family
//!   `van beethoven`), hyphens stay inside family names (`müller-lüdenscheidt`).
//! - A full name with a comma is `Family, Given` (further comma parts that are only
//!   suffixes are dropped, any others join the given name). Without a comma the
//!   source's [`NameOrder`] decides: given-first takes the last word plus the particles
//!   before it as family name (but never the first word), family-first takes the
//!   leading particles plus the next word. A one-word full name is a family name.
//! - In Spanish-speaking countries a given-first full name of three or more words ends
//!   in two family names (`María García López` → given `maría`, family `garcía lópez`).
//!   This splits compound given names wrongly (`María José García` → family
//!   `josé garcía`), which is the rarer case since everyone carries two family names.
//! - The standardized full name is written `family, given` (or the single part), so
//!   both input forms give the same value and standardizing again changes nothing
//!   (property-tested). Two rules keep it so: a family name of several words alone is
//!   written `family,` (and `Family,` with nothing after the comma reads as a family
//!   name alone), and a given part made only of suffixes or titles before a family name
//!   of two or more words (`Jr van Aa`) is dropped as a suffix, because `van aa, jr`
//!   would read back like `John Smith, Jr.`.

use super::text::clean_text;
use super::NameOrder;

/// A standardized full name.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SplitName {
    /// Given name(s), if any.
    pub given: Option<String>,
    /// Family name with particles, if any.
    pub family: Option<String>,
    /// True when titles or suffixes were removed.
    pub stripped: bool,
}

impl SplitName {
    /// The standardized full-name string: `family, given`, or the one part present; a
    /// family name of several words alone is written `family,` so that it does not
    /// read back as given and family name.
    pub fn full(&self) -> Option<String> {
        match (&self.given, &self.family) {
            (Some(g), Some(f)) => Some(format!("{f}, {g}")),
            (Some(g), None) => Some(g.clone()),
            (None, Some(f)) if f.contains(' ') => Some(format!("{f},")),
            (None, Some(f)) => Some(f.clone()),
            (None, None) => None,
        }
    }
}

const TITLES: &[&str] = &[
    "mr",
    "mrs",
    "ms",
    "miss",
    "mx",
    "dr",
    "prof",
    "herr",
    "frau",
    "mme",
    "mlle",
    "madame",
    "mademoiselle",
    "monsieur",
    "sr",
    "sra",
    "srta",
    "dña",
    "sir",
    "dame",
    "rev",
];

const SUFFIXES: &[&str] = &[
    "jr", "jnr", "junior", "sr", "snr", "senior", "ii", "iii", "iv", "phd", "esq",
];

const PARTICLES: &[&str] = &[
    "van", "von", "de", "da", "del", "della", "di", "du", "le", "la", "der", "den", "ter", "ten",
    "dos", "das", "zu", "vom", "zum", "zur", "st", "saint", "y",
];

const FRENCH_SPEAKING: &[&str] = &["FR", "BE", "CH", "LU", "MC", "CA"];
const SPANISH_SPEAKING: &[&str] = &[
    "ES", "MX", "AR", "CO", "CL", "PE", "VE", "EC", "GT", "CU", "BO", "DO", "HN", "PY", "SV", "NI",
    "CR", "PA", "UY", "PR",
];

/// True for a particle kept with the family name.
pub fn is_particle(word: &str) -> bool {
    PARTICLES.contains(&word)
}

/// One raw word: its case-folded text without trailing periods, and whether it had one.
struct RawWord {
    key: String,
    dotted: bool,
    text: String,
}

/// Split one comma part into raw words: on whitespace and after periods
/// (`J.R.R.` -> `J.` `R.` `R.`).
fn raw_words(part: &str) -> Vec<RawWord> {
    let mut out = Vec::new();
    for chunk in part.split_whitespace() {
        let mut rest = chunk;
        while !rest.is_empty() {
            let (piece, tail) = match rest.find('.') {
                Some(p) => (&rest[..=p], &rest[p + 1..]),
                None => (rest, ""),
            };
            rest = tail;
            let dotted = piece.ends_with('.');
            let text = clean_text(piece);
            // Punctuation inside a chunk can separate words ("jr#a" -> "jr", "a").
            let mut words = text.split(' ').filter(|w| !w.is_empty()).peekable();
            while let Some(w) = words.next() {
                out.push(RawWord {
                    key: w.replace('-', ""),
                    dotted: dotted && words.peek().is_none(),
                    text: w.to_string(),
                });
            }
        }
    }
    out
}

fn is_title(w: &RawWord, country: Option<&str>) -> bool {
    if TITLES.contains(&w.key.as_str()) {
        return true;
    }
    let in_list = |list: &[&str]| country.is_some_and(|c| list.contains(&c));
    w.dotted
        && ((w.key == "m" && in_list(FRENCH_SPEAKING))
            || (w.key == "d" && in_list(SPANISH_SPEAKING)))
}

fn is_suffix(w: &RawWord) -> bool {
    is_suffix_word(&w.key)
}

/// True for a generational suffix or post-nominal (`jr`, `sr`, `iii`, `phd`, ...).
pub fn is_suffix_word(word: &str) -> bool {
    SUFFIXES.contains(&word)
}

/// Remove leading titles and trailing suffixes, never the last remaining word.
/// Returns the kept words' cleaned texts and whether anything was removed.
fn strip(words: Vec<RawWord>, country: Option<&str>) -> (Vec<String>, bool) {
    let mut start = 0;
    let mut end = words.len();
    while end - start > 1 && is_title(&words[start], country) {
        start += 1;
    }
    while end - start > 1 && is_suffix(&words[end - 1]) {
        end -= 1;
    }
    let stripped = start > 0 || end < words.len();
    let kept = words
        .into_iter()
        .skip(start)
        .take(end - start)
        .map(|w| w.text)
        .collect();
    (kept, stripped)
}

/// Clean a given-name or family-name value: titles and suffixes removed.
/// Returns `None` when nothing is left, and whether titles or suffixes were removed.
pub fn clean_name_part(raw: &str, country: Option<&str>) -> (Option<String>, bool) {
    // One word of ASCII letters: nothing to split or strip (the last word always
    // stays), cleaning only lower-cases it.
    if !raw.is_empty() && raw.bytes().all(|b| b.is_ascii_alphabetic()) {
        return (Some(raw.to_ascii_lowercase()), false);
    }
    let words = raw_words(&raw.replace(',', " "));
    let (kept, stripped) = strip(words, country);
    let joined = kept.join(" ");
    ((!joined.is_empty()).then_some(joined), stripped)
}

/// Drop leading titles and trailing suffixes of a name part, keeping one word.
fn tidy(words: &[String]) -> (&[String], bool) {
    let (mut a, mut b) = (0, words.len());
    while b - a > 1 && TITLES.contains(&words[a].replace('-', "").as_str()) {
        a += 1;
    }
    while b - a > 1 && is_suffix_word(&words[b - 1].replace('-', "")) {
        b -= 1;
    }
    (&words[a..b], a > 0 || b < words.len())
}

/// A cleaned word that is a suffix or a title (periods are gone by now).
fn is_suffix_or_title_text(word: &str) -> bool {
    let key = word.replace('-', "");
    TITLES.contains(&key.as_str()) || is_suffix_word(&key)
}

fn join(words: &[String]) -> Option<String> {
    (!words.is_empty()).then(|| words.join(" "))
}

/// Split a full name into given and family name (rules in the module doc).
/// `None` when nothing usable is left.
pub fn split_full_name(raw: &str, order: NameOrder, country: Option<&str>) -> Option<SplitName> {
    split_two_plain_words(raw, order).or_else(|| split_full_name_general(raw, order, country))
}

/// The common case of [`split_full_name`] without the general machinery: two words of
/// ASCII letters, `Given Family` / `Family Given` (by `order`) or `Family, Given`, none
/// of them a title, suffix or particle. `None` for anything else.
fn split_two_plain_words(raw: &str, order: NameOrder) -> Option<SplitName> {
    let (first, second, comma) = match raw.split_once(", ") {
        Some((a, b)) => (a, b, true),
        None => {
            let (a, b) = raw.split_once(' ')?;
            (a, b, false)
        }
    };
    let plain = |w: &str| !w.is_empty() && w.bytes().all(|b| b.is_ascii_alphabetic());
    if !plain(first) || !plain(second) {
        return None;
    }
    let (a, b) = (first.to_ascii_lowercase(), second.to_ascii_lowercase());
    let special = |w: &str| TITLES.contains(&w) || is_suffix_word(w) || is_particle(w);
    if special(&a) || special(&b) {
        return None;
    }
    let (given, family) = if comma || order == NameOrder::FamilyFirst {
        (b, a)
    } else {
        (a, b)
    };
    Some(SplitName {
        given: Some(given),
        family: Some(family),
        stripped: false,
    })
}

/// [`split_full_name`] for any input.
fn split_full_name_general(
    raw: &str,
    order: NameOrder,
    country: Option<&str>,
) -> Option<SplitName> {
    let mut stripped = false;
    let mut parts: Vec<Vec<String>> = Vec::new();
    let (mut segments, mut first_used, mut later_used) = (0, false, false);
    for (i, part) in raw.split([',', ';']).enumerate() {
        segments += 1;
        let words = raw_words(part);
        if words.is_empty() {
            continue;
        }
        if i == 0 {
            first_used = true;
        } else {
            later_used = true;
        }
        // A later comma part made only of suffixes or titles: "Smith, John, Jr.",
        // "John Smith, Jr." (but in "Smith, Jr" the "Jr" may be the given name).
        let full_before = parts.len() >= 2 || parts.first().is_some_and(|p| p.len() >= 2);
        if full_before && words.iter().all(|w| is_suffix(w) || is_title(w, country)) {
            stripped = true;
            continue;
        }
        let (kept, s) = strip(words, country);
        stripped |= s;
        parts.push(kept);
    }
    // `Family,` with nothing after the comma: a family name alone.
    let family_only = first_used && segments > 1 && !later_used;
    let (given, family) = match parts.len() {
        0 => return None,
        1 if family_only => (None, join(&parts[0])),
        1 => {
            let w = &parts[0];
            if w.len() == 1 {
                (None, join(w))
            } else {
                let (given, family) = match order {
                    NameOrder::GivenFirst => {
                        // Spanish naming: two family names ("María García López").
                        let two =
                            w.len() >= 3 && country.is_some_and(|c| SPANISH_SPEAKING.contains(&c));
                        let mut start = w.len() - if two { 2 } else { 1 };
                        while start >= 2 && is_particle(&w[start - 1]) {
                            start -= 1;
                        }
                        (&w[..start], &w[start..])
                    }
                    NameOrder::FamilyFirst => {
                        let mut end = 0;
                        while end + 1 < w.len() && is_particle(&w[end]) {
                            end += 1;
                        }
                        (&w[end + 1..], &w[..=end])
                    }
                };
                // Each part is read back on its own from the `family, given` output, so
                // it loses titles and suffixes at its edges now ("Ann IV Lee").
                let (given, sg) = tidy(given);
                let (family, sf) = tidy(family);
                stripped |= sg || sf;
                // A given part made only of suffixes or titles before a family name of
                // two or more words ("Jr van Aa") would read back from `van aa, jr` as
                // a suffix: it is one.
                if family.len() >= 2 && given.iter().all(|w| is_suffix_or_title_text(w)) {
                    stripped |= !given.is_empty();
                    (None, join(family))
                } else {
                    (join(given), join(family))
                }
            }
        }
        _ => {
            // The later parts together are the given name; read back from `family,
            // given` they are one part, which loses titles and suffixes at its edges.
            let given: Vec<String> = parts[1..].iter().flatten().cloned().collect();
            let (given, sg) = tidy(&given);
            stripped |= sg;
            (join(given), join(&parts[0]))
        }
    };
    Some(SplitName {
        given,
        family,
        stripped,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        #[test]
        fn one_ascii_word_fast_path_matches_the_general_path(
            w in "[a-zA-Z]{1,12}|Jr|SR|III|Dr|Herr|van",
            c in "DE|FR|ES|US|GB",
        ) {
            // The general path: the same word with a trailing space (not a single
            // plain word, so no fast path), which cleaning ignores.
            let general = clean_name_part(&format!("{w} "), Some(&c));
            prop_assert_eq!(clean_name_part(&w, Some(&c)), general);
        }

        #[test]
        fn splitting_the_standardized_full_name_again_changes_nothing(
            words in proptest::collection::vec(
                "Ann|John|María|José|Smith|García|López|Aa|van|de|la|von|der|Jr|Sr|III|PhD|Dr|Mr|Frau|M\\.|D\\.|J\\.",
                1..5,
            ),
            commas in proptest::collection::vec(proptest::bool::ANY, 5),
            c in "DE|FR|ES|US|GB",
        ) {
            // Names built from titles, suffixes, particles, initials and comma forms.
            let mut raw = String::new();
            for (i, w) in words.iter().enumerate() {
                if i > 0 {
                    raw.push_str(if commas[i] { ", " } else { " " });
                }
                raw.push_str(w);
            }
            for order in [NameOrder::GivenFirst, NameOrder::FamilyFirst] {
                let Some(once) = split_full_name(&raw, order, Some(&c)) else { continue };
                let full = once.full().unwrap();
                let twice = split_full_name(&full, order, Some(&c)).unwrap();
                prop_assert_eq!(twice.full(), Some(full.clone()), "{} -> {} ({:?})", raw, full, order);
                prop_assert_eq!((&twice.given, &twice.family), (&once.given, &once.family));
            }
        }

        #[test]
        fn two_plain_words_fast_path_matches_the_general_path(
            a in "[a-zA-Z]{1,10}|Mr|Dr|Frau|Sr|Jr|III|van|de|la|y|M|D",
            b in "[a-zA-Z]{1,10}|Mr|Sra|Jr|PhD|IV|von|du|Le",
            sep in " |, |,|  | ,",
            c in "DE|FR|ES|US|GB",
        ) {
            let raw = format!("{a}{sep}{b}");
            for order in [NameOrder::GivenFirst, NameOrder::FamilyFirst] {
                prop_assert_eq!(
                    split_full_name(&raw, order, Some(&c)),
                    split_full_name_general(&raw, order, Some(&c)),
                    "{} {:?}", raw, order
                );
            }
        }
    }

    fn split(raw: &str) -> (Option<String>, Option<String>) {
        let s = split_full_name(raw, NameOrder::GivenFirst, None).unwrap();
        (s.given, s.family)
    }

    fn gf(g: &str, f: &str) -> (Option<String>, Option<String>) {
        (Some(g.to_string()), Some(f.to_string()))
    }

    #[test]
    fn both_full_name_forms() {
        // Common practice, no source: "Family, Given" and "Given Family".
        assert_eq!(split("Smith, John"), gf("john", "smith"));
        assert_eq!(split("John Smith"), gf("john", "smith"));
        assert_eq!(split("Mary Ann Smith"), gf("mary ann", "smith"));
        let ff = split_full_name("Smith John", NameOrder::FamilyFirst, None).unwrap();
        assert_eq!((ff.given, ff.family), gf("john", "smith"));
        let ff = split_full_name("van der Berg Jan", NameOrder::FamilyFirst, None).unwrap();
        assert_eq!((ff.given, ff.family), gf("jan", "van der berg"));
    }

    #[test]
    fn particles_stay_with_family_name() {
        assert_eq!(split("Ludwig van Beethoven"), gf("ludwig", "van beethoven"));
        assert_eq!(split("Juan de la Cruz"), gf("juan", "de la cruz"));
        assert_eq!(split("Anna von der Heide"), gf("anna", "von der heide"));
        assert_eq!(split("Leonardo da Vinci"), gf("leonardo", "da vinci"));
        assert_eq!(split("van Gogh, Vincent"), gf("vincent", "van gogh"));
        // The first word is never taken for the family name.
        assert_eq!(split("Van Morrison"), gf("van", "morrison"));
    }

    #[test]
    fn hyphens_kept() {
        assert_eq!(
            split("Hans-Peter Müller-Lüdenscheidt"),
            gf("hans-peter", "müller-lüdenscheidt")
        );
    }

    #[test]
    fn titles_removed() {
        assert_eq!(split("Dr. John Smith"), gf("john", "smith"));
        assert_eq!(split("Prof. Dr. Anna Schmidt"), gf("anna", "schmidt"));
        assert_eq!(split("Herr Jörg Müller"), gf("jörg", "müller"));
        assert_eq!(split("Frau Petra Groß"), gf("petra", "gross"));
        assert_eq!(split("Mme Claire Dubois"), gf("claire", "dubois"));
        assert_eq!(split("Sra. María García"), gf("maría", "garcía"));
        assert_eq!(split("Dña. Carmen López"), gf("carmen", "lópez"));
        assert_eq!(split("Smith, Mrs. Jane"), gf("jane", "smith"));
        let s = split_full_name("Mr John Smith", NameOrder::GivenFirst, None).unwrap();
        assert!(s.stripped);
    }

    #[test]
    fn one_letter_titles_depend_on_country() {
        let fr = split_full_name("M. Jean Dupont", NameOrder::GivenFirst, Some("FR")).unwrap();
        assert_eq!((fr.given, fr.family), gf("jean", "dupont"));
        let es = split_full_name("D. Juan Pérez", NameOrder::GivenFirst, Some("ES")).unwrap();
        assert_eq!((es.given, es.family), gf("juan", "pérez"));
        // Elsewhere an initial: "M. John Smith" keeps the M.
        let us = split_full_name("M. John Smith", NameOrder::GivenFirst, Some("US")).unwrap();
        assert_eq!((us.given, us.family), gf("m john", "smith"));
    }

    #[test]
    fn suffixes_removed_and_sr_rule() {
        assert_eq!(split("John Smith Jr."), gf("john", "smith"));
        assert_eq!(split("John Smith III"), gf("john", "smith"));
        assert_eq!(split("Smith, John, Jr."), gf("john", "smith"));
        assert_eq!(split("John Smith, Jr"), gf("john", "smith"));
        // "Sr." first = Spanish title, last = English suffix; both removed.
        assert_eq!(split("Sr. Juan García"), gf("juan", "garcía"));
        assert_eq!(split("John Smith Sr."), gf("john", "smith"));
        // A one-word part keeps its only word.
        assert_eq!(clean_name_part("Sr", None), (Some("sr".to_string()), false));
    }

    #[test]
    fn spanish_double_family_names() {
        let es = |raw| {
            let s = split_full_name(raw, NameOrder::GivenFirst, Some("MX")).unwrap();
            (s.given, s.family)
        };
        assert_eq!(es("María García López"), gf("maría", "garcía lópez"));
        assert_eq!(
            es("María José García López"),
            gf("maría josé", "garcía lópez")
        );
        assert_eq!(es("Juan de la Cruz Pérez"), gf("juan", "de la cruz pérez"));
        assert_eq!(es("Juan Pérez"), gf("juan", "pérez"));
        // Elsewhere one family name.
        assert_eq!(split("María García López"), gf("maría garcía", "lópez"));
    }

    #[test]
    fn suffix_before_a_two_word_family_name_is_a_suffix() {
        // "Jr" cannot be read back as a given name from `van aa, jr` (that form reads
        // like "John Smith, Jr."), so it is dropped as the suffix it is, and a family
        // name of several words alone is written with a comma.
        let s = split_full_name("Jr van Aa", NameOrder::GivenFirst, None).unwrap();
        assert_eq!(
            (s.given.as_deref(), s.family.as_deref()),
            (None, Some("van aa"))
        );
        assert!(s.stripped);
        assert_eq!(s.full().as_deref(), Some("van aa,"));
        let es = split_full_name("Jr García López", NameOrder::GivenFirst, Some("ES")).unwrap();
        assert_eq!(es.full().as_deref(), Some("garcía lópez,"));
        for order in [NameOrder::GivenFirst, NameOrder::FamilyFirst] {
            for out in ["van aa,", "garcía lópez,"] {
                let again = split_full_name(out, order, Some("ES")).unwrap();
                assert_eq!(again.full().as_deref(), Some(out));
            }
        }
        // Unchanged: a suffix after the comma, and a suffix as the only given name.
        assert_eq!(split("John Smith, Jr."), gf("john", "smith"));
        assert_eq!(split("Smith, Jr"), gf("jr", "smith"));
    }

    #[test]
    fn one_word_is_family_name() {
        assert_eq!(split("Madonna"), (None, Some("madonna".to_string())));
        assert!(split_full_name(" , . ", NameOrder::GivenFirst, None).is_none());
    }

    #[test]
    fn full_string_is_family_comma_given() {
        let s = split_full_name("John Smith", NameOrder::GivenFirst, None).unwrap();
        assert_eq!(s.full().as_deref(), Some("smith, john"));
        // Standardizing the output again gives the same split, whatever the order.
        for order in [NameOrder::GivenFirst, NameOrder::FamilyFirst] {
            let again = split_full_name("smith, john", order, None).unwrap();
            assert_eq!(again.full().as_deref(), Some("smith, john"));
        }
    }

    #[test]
    fn name_parts_cleaned() {
        assert_eq!(
            clean_name_part("  O'Brien ", None).0.as_deref(),
            Some("obrien")
        );
        assert_eq!(
            clean_name_part("Dr. Anna", None),
            (Some("anna".to_string()), true)
        );
        assert_eq!(
            clean_name_part("Smith Jr.", None),
            (Some("smith".to_string()), true)
        );
        assert_eq!(clean_name_part("Müller", None).0.as_deref(), Some("müller"));
        assert_eq!(clean_name_part("...", None).0, None);
    }
}
