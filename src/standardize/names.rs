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

use rustc_hash::FxHashMap;

use super::nicknames::nickname_entry;
use super::text::{clean_text, fold_for_comparison};
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
    /// Written in capitals: two or more letters, none of them lower-case.
    caps: bool,
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
            let caps = piece.chars().filter(|c| c.is_alphabetic()).count() >= 2
                && !piece.chars().any(char::is_lowercase);
            // Punctuation inside a chunk can separate words ("jr#a" -> "jr", "a").
            let mut words = text.split(' ').filter(|w| !w.is_empty()).peekable();
            while let Some(w) = words.next() {
                out.push(RawWord {
                    key: w.replace('-', ""),
                    dotted: dotted && words.peek().is_none(),
                    text: w.to_string(),
                    caps,
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
    if order == NameOrder::Mixed {
        return split_mixed(raw, country, &NameFrequencies::default());
    }
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
                    NameOrder::GivenFirst | NameOrder::Mixed => {
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

/// How often each word was seen as a given name and as a family name in the sources of
/// a run that keep the two apart (`given_name` and `family_name` columns). A
/// `name_order = "mixed"` source reads its free-text names with these counts.
///
/// Words are counted in their compared form ([`fold_for_comparison`]), each word of a
/// multi-word value once.
#[derive(Debug, Clone, Default)]
pub struct NameFrequencies {
    given: FxHashMap<String, u32>,
    family: FxHashMap<String, u32>,
    given_total: u64,
    family_total: u64,
}

/// Pseudo-count of given-name use for a word the nickname table knows (a given name or
/// a diminutive), so that names the sources never showed still lean the right way.
const NICKNAME_PSEUDO_COUNT: f64 = 2.0;

/// Evidence (natural log odds) that one reading of a free-text name beats the source's
/// default reading before it is taken: a factor of about 3.
const MIXED_MARGIN: f64 = 1.1;

impl NameFrequencies {
    /// Count the words of a standardized given name.
    pub fn add_given(&mut self, value: &str) {
        for w in words_of(value) {
            *self.given.entry(w).or_insert(0) += 1;
            self.given_total += 1;
        }
    }

    /// Count the words of a standardized family name (particles are not counted).
    pub fn add_family(&mut self, value: &str) {
        for w in words_of(value) {
            if is_particle(&w) {
                continue;
            }
            *self.family.entry(w).or_insert(0) += 1;
            self.family_total += 1;
        }
    }

    /// Add the counts of `other`.
    pub fn merge(&mut self, other: NameFrequencies) {
        for (w, n) in other.given {
            *self.given.entry(w).or_insert(0) += n;
        }
        for (w, n) in other.family {
            *self.family.entry(w).or_insert(0) += n;
        }
        self.given_total += other.given_total;
        self.family_total += other.family_total;
    }

    /// Number of given-name and family-name words counted.
    pub fn totals(&self) -> (u64, u64) {
        (self.given_total, self.family_total)
    }

    /// Log odds that `word` (a cleaned name word) is a given name rather than a family
    /// name: `ln((g + ½) / (G + ½)) − ln((f + ½) / (F + ½))` with `g`, `f` its counts and
    /// `G`, `F` the totals (add-half smoothing), plus a pseudo-count for words of the
    /// nickname table. 0 for a word seen in neither role.
    pub fn given_log_odds(&self, word: &str) -> f64 {
        let key = word_key(word);
        if key.chars().count() < 2 || is_particle(&key) {
            return 0.0;
        }
        let mut g = self.given.get(key.as_str()).copied().unwrap_or(0) as f64;
        let f = self.family.get(key.as_str()).copied().unwrap_or(0) as f64;
        if nickname_entry(&key).is_some() {
            g += NICKNAME_PSEUDO_COUNT;
        }
        if g == 0.0 && f == 0.0 {
            return 0.0;
        }
        let gt = self.given_total as f64 + 0.5;
        let ft = self.family_total as f64 + 0.5;
        ((g + 0.5) / gt).ln() - ((f + 0.5) / ft).ln()
    }
}

/// The counted form of a name word: compared form without hyphens.
fn word_key(word: &str) -> String {
    fold_for_comparison(word).replace('-', "")
}

/// The counted words of a name value (two or more characters).
fn words_of(value: &str) -> impl Iterator<Item = String> + '_ {
    value
        .split(' ')
        .map(word_key)
        .filter(|w| w.chars().count() > 1)
}

/// A candidate reading of a free-text name: given words and family words, by index.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Reading {
    /// `given = words[..k]`, `family = words[k..]`.
    GivenFirst(usize),
    /// `family = words[..k]`, `given = words[k..]`.
    FamilyFirst(usize),
}

impl Reading {
    fn parts(self, w: &[String]) -> (&[String], &[String]) {
        match self {
            Reading::GivenFirst(k) => (&w[..k], &w[k..]),
            Reading::FamilyFirst(k) => (&w[k..], &w[..k]),
        }
    }
}

/// Split a free-text full name whose order varies from record to record
/// (`name_order = "mixed"`), from evidence in the record itself:
///
/// 1. A comma: `Family, Given` (as for every order).
/// 2. Capitals: when some words are written in capitals and others are not, a leading
///    or trailing run of capitalised words is the family name (`LANGE Mechthilde`,
///    `Mechthilde LANGE`), a convention in many countries (common practice, no source).
/// 3. Word frequencies: every split into a leading and a trailing part, in either
///    order, is scored by the log odds of its words being given or family names
///    ([`NameFrequencies::given_log_odds`], learned from the run's sources with
///    separate name columns, and the nickname table). A particle ends no part.
///    The best reading is taken when it beats the given-first reading (the default) by
///    `MIXED_MARGIN`; otherwise the default stays, and the comparison's `swapped`
///    level and any-order blocking keys cover the other reading.
///
/// A single word is a given name when the frequencies say so (log odds > margin), else
/// a family name, as in the other orders.
pub fn split_mixed(raw: &str, country: Option<&str>, freqs: &NameFrequencies) -> Option<SplitName> {
    if raw.contains([',', ';']) {
        return split_full_name_general(raw, NameOrder::GivenFirst, country);
    }
    let words = raw_words(raw);
    // Titles and suffixes at the edges, as `strip` does, keeping the capitals flags.
    let (mut a, mut b) = (0, words.len());
    while b - a > 1 && is_title(&words[a], country) {
        a += 1;
    }
    while b - a > 1 && is_suffix(&words[b - 1]) {
        b -= 1;
    }
    let mut stripped = a > 0 || b < words.len();
    let kept = &words[a..b];
    let w: Vec<String> = kept.iter().map(|w| w.text.clone()).collect();
    let (given, family) = match w.len() {
        0 => return None,
        1 => {
            if freqs.given_log_odds(&w[0]) > MIXED_MARGIN {
                (join(&w), None)
            } else {
                (None, join(&w))
            }
        }
        n => {
            let reading = choose_reading(kept, &w, country, freqs);
            let (given, family) = reading.parts(&w);
            let (given, sg) = tidy(given);
            let (family, sf) = tidy(family);
            stripped |= sg || sf;
            debug_assert!(n >= 2);
            if family.len() >= 2 && given.iter().all(|w| is_suffix_or_title_text(w)) {
                stripped |= !given.is_empty();
                (None, join(family))
            } else {
                (join(given), join(family))
            }
        }
    };
    Some(SplitName {
        given,
        family,
        stripped,
    })
}

/// The reading of two or more words (rules in [`split_mixed`]).
fn choose_reading(
    raw: &[RawWord],
    w: &[String],
    country: Option<&str>,
    freqs: &NameFrequencies,
) -> Reading {
    let n = w.len();
    // The default: given-first, family = last word with its particles (two family
    // names in Spanish-speaking countries), as `split_full_name_general` reads it.
    let two = n >= 3 && country.is_some_and(|c| SPANISH_SPEAKING.contains(&c));
    let mut start = n - if two { 2 } else { 1 };
    while start >= 2 && is_particle(&w[start - 1]) {
        start -= 1;
    }
    let default = Reading::GivenFirst(start);
    // Capitals: some words in capitals, some not.
    let caps: Vec<bool> = raw.iter().map(|r| r.caps).collect();
    if caps.iter().any(|c| *c) && caps.iter().any(|c| !*c) {
        let lead = caps.iter().take_while(|c| **c).count();
        let trail = caps.iter().rev().take_while(|c| **c).count();
        if lead > 0 && lead + caps.iter().skip(lead).filter(|c| **c).count() == lead {
            return Reading::FamilyFirst(lead);
        }
        if trail > 0 && trail + caps[..n - trail].iter().filter(|c| **c).count() == trail {
            return Reading::GivenFirst(n - trail);
        }
    }
    let odds: Vec<f64> = w.iter().map(|x| freqs.given_log_odds(x)).collect();
    let score = |r: Reading| -> f64 {
        let (g, f) = match r {
            Reading::GivenFirst(k) => (0..k, k..n),
            Reading::FamilyFirst(k) => (k..n, 0..k),
        };
        g.map(|i| odds[i]).sum::<f64>() - f.map(|i| odds[i]).sum::<f64>()
    };
    let base = score(default);
    let mut best = (default, base);
    for k in 1..n {
        // A particle belongs to the word after it, so no part ends with one.
        if is_particle(&w[k - 1]) {
            continue;
        }
        for r in [Reading::GivenFirst(k), Reading::FamilyFirst(k)] {
            let s = score(r);
            if s > best.1 {
                best = (r, s);
            }
        }
    }
    if best.1 > base + MIXED_MARGIN {
        best.0
    } else {
        default
    }
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

    /// Counts as a structured source would give them (invented names).
    fn freqs() -> NameFrequencies {
        let mut f = NameFrequencies::default();
        for g in [
            "mechthilde",
            "maría josé",
            "josé",
            "anna",
            "jacqueline",
            "dominique",
            "hans-peter",
        ] {
            for _ in 0..5 {
                f.add_given(g);
            }
        }
        for fam in [
            "lange",
            "garcía",
            "pazos",
            "bailes",
            "joly",
            "van der berg",
            "ortega",
        ] {
            for _ in 0..5 {
                f.add_family(fam);
            }
        }
        f
    }

    fn mixed(raw: &str, f: &NameFrequencies) -> (Option<String>, Option<String>) {
        let s = split_mixed(raw, Some("DE"), f).unwrap();
        (s.given, s.family)
    }

    #[test]
    fn mixed_order_decides_per_record() {
        let f = freqs();
        // Frequencies: either order of the same two words.
        assert_eq!(mixed("Lange Mechthilde", &f), gf("mechthilde", "lange"));
        assert_eq!(mixed("Mechthilde Lange", &f), gf("mechthilde", "lange"));
        assert_eq!(mixed("Bailes  Jacqueline", &f), gf("jacqueline", "bailes"));
        // Hyphenated given names are looked up whole.
        assert_eq!(mixed("Lange Hans-Peter", &f), gf("hans-peter", "lange"));
        // Capitals mark the family name, a convention in many countries (common
        // practice, no source), whatever the counts say.
        assert_eq!(mixed("JOLY Dominique", &f), gf("dominique", "joly"));
        assert_eq!(mixed("Dominique JOLY", &f), gf("dominique", "joly"));
        assert_eq!(
            mixed("ZANDER Quirin", &NameFrequencies::default()),
            gf("quirin", "zander")
        );
        // All in capitals is no evidence: the default reading (given first).
        assert_eq!(
            mixed("QUIRIN ZANDER", &NameFrequencies::default()),
            gf("quirin", "zander")
        );
        // A comma: family first.
        assert_eq!(
            mixed("Zander, Quirin", &NameFrequencies::default()),
            gf("quirin", "zander")
        );
        // Unknown words: the default reading.
        assert_eq!(
            mixed("Quirin Zander", &NameFrequencies::default()),
            gf("quirin", "zander")
        );
        // Two given names kept whole, two family names kept whole.
        assert_eq!(mixed("María José García", &f), gf("maría josé", "garcía"));
        assert_eq!(
            mixed("García Ortega María José", &f),
            gf("maría josé", "garcía ortega")
        );
        assert_eq!(mixed("Anna Pazos Ortega", &f), gf("anna", "pazos ortega"));
        // Particles stay with the family name.
        assert_eq!(mixed("van der Berg Anna", &f), gf("anna", "van der berg"));
        assert_eq!(mixed("Anna van der Berg", &f), gf("anna", "van der berg"));
        // Titles and suffixes go, as in the other orders.
        assert_eq!(mixed("Dr. Lange Mechthilde", &f), gf("mechthilde", "lange"));
    }

    #[test]
    fn mixed_single_words_follow_the_counts_and_the_nickname_table() {
        let f = freqs();
        assert_eq!(mixed("Jacqueline", &f), (Some("jacqueline".into()), None));
        assert_eq!(mixed("Lange", &f), (None, Some("lange".into())));
        // Unknown: a family name, as in the other orders.
        assert_eq!(mixed("Zander", &f), (None, Some("zander".into())));
        // Known to the nickname table (a given name there) without any counts.
        assert_eq!(
            mixed("William", &NameFrequencies::default()),
            (Some("william".into()), None)
        );
    }

    #[test]
    fn name_frequency_log_odds() {
        let f = freqs();
        // 5 of 40 given words vs 0 of 35 family words (hand-computed):
        // ln(5.5 / 40.5) - ln(0.5 / 35.5) = ln(0.13580) - ln(0.01408) = 2.2664.
        assert!((f.given_log_odds("Mechthilde") - 2.2664).abs() < 1e-3);
        assert!(f.given_log_odds("lange") < -2.0);
        assert_eq!(f.given_log_odds("zander"), 0.0);
        assert_eq!(f.given_log_odds("van"), 0.0);
        assert_eq!(f.totals(), (40, 35));
    }

    proptest! {
        /// The standardized form (`family, given`) reads back to the same parts, with
        /// or without counts.
        #[test]
        fn mixed_split_read_again_changes_nothing(
            words in proptest::collection::vec(
                "Anna|ANNA|Mechthilde|LANGE|Lange|García|Ortega|josé|María|van|der|Berg|Jr|Dr|Zander|X\\.",
                1..5,
            ),
            comma in proptest::bool::ANY,
            use_counts in proptest::bool::ANY,
        ) {
            let f = if use_counts { freqs() } else { NameFrequencies::default() };
            let mut raw = words.join(" ");
            if comma && words.len() > 1 {
                raw = format!("{}, {}", words[0], words[1..].join(" "));
            }
            let Some(once) = split_mixed(&raw, Some("ES"), &f) else { return Ok(()) };
            let full = once.full().unwrap();
            let twice = split_mixed(&full, Some("ES"), &f).unwrap();
            prop_assert_eq!((&twice.given, &twice.family), (&once.given, &once.family), "{} -> {}", raw, full);
        }
    }
}
