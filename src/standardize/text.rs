//! Text cleaning, ASCII folding and German/Nordic transliteration.
//!
//! In: any string. Out: the forms the other standardizers build on:
//! - [`casefold`]: NFKC, then lower case with the full case-folding mappings that matter
//!   for Latin-script names (`ß`/`ẞ` → `ss`, final sigma → sigma) and one policy for
//!   Turkish: `İ` folds to plain `i` (no combining dot), `ı` stays `ı` until [`fold_ascii`].
//!   NFKC output is also in NFC, so the result is NFC as the stage contract says.
//! - [`clean_text`]: [`casefold`] plus punctuation cleaning: letters, digits and combining
//!   marks are kept, apostrophes are dropped (`O'Brien` → `obrien`), hyphens are kept
//!   inside words without spaces around them, everything else separates words; one
//!   space between words, none at the ends.
//! - [`fold_ascii`]: blind folding to lower-case ASCII.
//! - [`translit_variants`], [`translit_key`], [`translit_equivalent`]: the German/Nordic
//!   transliteration variants (`müller` = `mueller` = `muller`).
//!
//! # Transliteration rule
//!
//! DIN 5007-2 and ICAO Doc 9303 write `ä ö ü ß` as `ae oe ue ss` (and `å æ ø` as
//! `aa ae oe`), generic transliterators drop the marks (`muller`). Records can carry any
//! of the three forms, so two values are *transliteration-equivalent* when their
//! [`translit_key`]s are equal. The key is [`fold_ascii`] followed by collapsing the
//! vowel pairs `ue oe ae aa` to `u o a a` where they can stand for an umlaut or `å`.
//! A pair is NOT collapsed when
//! - it ends the word (`Joe`, `Zoe`, `Sue`, `Mae`: word-final umlauts are rare in German
//!   names, while these are common English names),
//! - it follows another vowel (`Bauer`, `Mauer`, `Bräuer`: the `ue` belongs to `eu`/`au`),
//! - it is `ue` after `q` (`Jacques`, `Velasquez`),
//! - the word ends right after it with `l` (`Samuel`, `Manuel`, `Michael`, `Raphael`,
//!   `Israel`, `Joel`, `Noel`), so that `Michael` ≠ `Michal` and `Samuel` ≠ `Samul`.
//!
//! Trade-off: this still equates some unrelated spellings, mostly Spanish `ue`
//! diphthongs (`Rueda` ~ `Ruda`) and Dutch `aa` (`Haan` ~ `Han`, `Maas` ~ `Mas`).
//! Callers should use equivalence as its own agreement level, weaker than exact
//! agreement, so that the model learns how much it is worth.

use std::borrow::Cow;

use unicode_normalization::char::is_combining_mark;
use unicode_normalization::UnicodeNormalization;

/// NFKC then case folding (see the module doc for the exact mappings).
pub fn casefold(s: &str) -> Cow<'_, str> {
    if s.is_ascii() {
        if s.bytes().any(|b| b.is_ascii_uppercase()) {
            return Cow::Owned(s.to_ascii_lowercase());
        }
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 4);
    for c in s.nfkc() {
        match c {
            'ß' | 'ẞ' => out.push_str("ss"),
            'İ' => out.push('i'),
            'ς' => out.push('σ'),
            c if c.is_ascii() => out.push(c.to_ascii_lowercase()),
            c => out.extend(c.to_lowercase()),
        }
    }
    // Lower-casing can leave a base letter and a mark next to each other that compose.
    if out.chars().any(is_combining_mark) {
        Cow::Owned(out.nfc().collect())
    } else {
        Cow::Owned(out)
    }
}

/// True for apostrophe-like characters, which are dropped inside words.
pub(crate) fn is_apostrophe(c: char) -> bool {
    matches!(c, '\'' | '’' | '‘' | 'ʼ' | '`' | '´' | 'ʹ')
}

/// True for hyphen-like characters, which become `-` inside words.
pub(crate) fn is_hyphen(c: char) -> bool {
    matches!(c, '-' | '‐' | '‑' | '‒' | '–' | '—' | '−')
}

/// True for characters that are part of a word.
pub(crate) fn is_word_char(c: char) -> bool {
    c.is_alphanumeric() || (!c.is_ascii() && is_combining_mark(c))
}

/// Case-fold and clean punctuation: see the module doc.
pub fn clean_text(s: &str) -> String {
    clean_text_keep(s, &[])
}

/// [`clean_text`], keeping each character of `keep` as a word of its own (e.g. `&`).
pub fn clean_text_keep(s: &str, keep: &[char]) -> String {
    if is_plain_ascii(s) {
        return s.to_ascii_lowercase();
    }
    clean_text_general(s, keep)
}

/// True for ASCII letters and digits in words separated by single spaces, without
/// spaces at the ends: text that cleaning only lower-cases (the common case).
fn is_plain_ascii(s: &str) -> bool {
    let mut prev_space = true;
    for b in s.bytes() {
        match b {
            b' ' if !prev_space => prev_space = true,
            b'a'..=b'z' | b'A'..=b'Z' | b'0'..=b'9' => prev_space = false,
            _ => return false,
        }
    }
    !prev_space
}

/// [`clean_text_keep`] without the fast path for plain ASCII.
fn clean_text_general(s: &str, keep: &[char]) -> String {
    let folded = casefold(s);
    let mut out = String::with_capacity(folded.len());
    // 0 = nothing pending, 1 = space pending, 2 = hyphen pending.
    let mut pending = 0u8;
    let mut last_word = false;
    for c in folded.chars() {
        if is_word_char(c) {
            if !out.is_empty() {
                if pending == 2 && last_word {
                    out.push('-');
                } else if pending != 0 {
                    out.push(' ');
                }
            }
            out.push(c);
            pending = 0;
            last_word = true;
        } else if is_apostrophe(c) {
            // Dropped: `o'brien` -> `obrien`.
        } else if is_hyphen(c) {
            pending = 2;
        } else if keep.contains(&c) {
            if !out.is_empty() {
                out.push(' ');
            }
            out.push(c);
            pending = 1;
            last_word = false;
        } else if pending == 0 {
            pending = 1;
        }
    }
    // Dropping an apostrophe can put a stray combining mark next to a letter.
    if !out.is_ascii() && out.chars().any(is_combining_mark) {
        out = out.nfc().collect();
    }
    out
}

/// The ASCII replacement of letters that NFKD does not decompose (lower and upper case).
fn special_ascii(c: char) -> Option<&'static str> {
    Some(match c {
        'ß' | 'ẞ' => "ss",
        'æ' | 'Æ' => "ae",
        'ø' | 'Ø' => "o",
        'œ' | 'Œ' => "oe",
        'ł' | 'Ł' => "l",
        'đ' | 'Đ' | 'ð' | 'Ð' => "d",
        'þ' | 'Þ' => "th",
        'ı' => "i",
        'ħ' | 'Ħ' => "h",
        'ŧ' | 'Ŧ' => "t",
        'ŋ' | 'Ŋ' => "n",
        'ĸ' => "k",
        'ſ' => "s",
        _ => return None,
    })
}

/// Whether [`fold_ascii`] keeps every letter and digit of `s` (Latin script with
/// diacritics does; Cyrillic, Greek, CJK, Arabic, ... do not: their letters have no ASCII
/// form here and would be dropped).
pub fn folds_fully(s: &str) -> bool {
    s.is_ascii()
        || s.nfkd().all(|c| {
            c.is_ascii()
                || !c.is_alphanumeric()
                || is_combining_mark(c)
                || special_ascii(c).is_some()
                || c.to_lowercase()
                    .any(|l| l.is_ascii() || special_ascii(l).is_some())
        })
}

/// The form values are compared in: [`fold_ascii`] where it keeps every letter and
/// digit, else the value itself, lower-cased. Folding a name in another script would
/// leave nothing, and two different names would look equal.
pub fn fold_for_comparison(s: &str) -> String {
    if folds_fully(s) {
        fold_ascii(s)
    } else {
        s.to_lowercase()
    }
}

/// Blind ASCII folding for comparison and phonetic keys: `Müller` -> `muller`.
///
/// NFKD, drop combining marks, replace the letters NFKD leaves alone (`ß`→`ss`,
/// `æ`→`ae`, `ø`→`o`, `œ`→`oe`, `ł`→`l`, `đ`/`ð`→`d`, `þ`→`th`, `ı`→`i`, `ħ`→`h`,
/// `ŧ`→`t`, `ŋ`→`n`), lower-case. Characters with no ASCII form here (other scripts,
/// non-ASCII punctuation) are dropped, so the output is always lower-case ASCII and
/// the function is idempotent. Callers treat an empty result as "no folded form" and
/// compare the standardized value instead.
pub fn fold_ascii(s: &str) -> String {
    if s.is_ascii() {
        return s.to_ascii_lowercase();
    }
    let mut out = String::with_capacity(s.len());
    for c in s.nfkd() {
        if c.is_ascii() {
            out.push(c.to_ascii_lowercase());
        } else if is_combining_mark(c) {
            continue;
        } else if let Some(rep) = special_ascii(c) {
            out.push_str(rep);
        } else {
            for l in c.to_lowercase() {
                if l.is_ascii() {
                    out.push(l);
                } else if let Some(rep) = special_ascii(l) {
                    out.push_str(rep);
                }
            }
        }
    }
    out
}

/// DIN 5007-2 / ICAO Doc 9303 transliteration, then [`fold_ascii`]:
/// `ä`→`ae`, `ö`→`oe`, `ü`→`ue`, `ß`→`ss`, `ø`→`oe`, `å`→`aa`, `æ`→`ae`, `œ`→`oe`,
/// `þ`→`th`. `Müller` -> `mueller`, `Åberg` -> `aaberg`.
pub fn translit_din(s: &str) -> String {
    if s.is_ascii() {
        return s.to_ascii_lowercase();
    }
    let mut expanded = String::with_capacity(s.len() + 8);
    for c in s.nfc() {
        match c {
            'ä' | 'Ä' => expanded.push_str("ae"),
            'ö' | 'Ö' => expanded.push_str("oe"),
            'ü' | 'Ü' => expanded.push_str("ue"),
            'ø' | 'Ø' => expanded.push_str("oe"),
            'å' | 'Å' => expanded.push_str("aa"),
            c => expanded.push(c),
        }
    }
    fold_ascii(&expanded)
}

fn is_vowel(b: u8) -> bool {
    matches!(b, b'a' | b'e' | b'i' | b'o' | b'u' | b'y')
}

/// Whether the vowel pair at `i` may stand for an umlaut or `å` (see the module doc).
fn collapsible(b: &[u8], i: usize) -> bool {
    let end = i + 2;
    if end >= b.len() || !b[end].is_ascii_alphanumeric() {
        return false; // word-final
    }
    if i > 0 && b[i - 1].is_ascii_alphanumeric() {
        let prev = b[i - 1];
        if is_vowel(prev) || (b[i] == b'u' && prev == b'q') {
            return false;
        }
    }
    let l_end = b[end] == b'l' && (end + 1 == b.len() || !b[end + 1].is_ascii_alphanumeric());
    !l_end
}

/// Canonical transliteration key: [`fold_ascii`], then `ue oe ae aa` → `u o a a` where
/// the pair can stand for an umlaut (rule and trade-off in the module doc).
/// `müller`, `mueller` and `muller` all give `muller`; `samuel` stays `samuel`.
pub fn translit_key(s: &str) -> String {
    if !folds_fully(s) {
        return s.to_lowercase();
    }
    let folded = fold_ascii(s);
    let b = folded.as_bytes();
    let mut out = Vec::with_capacity(b.len());
    let mut i = 0;
    while i < b.len() {
        if i + 1 < b.len() {
            let pair = (b[i], b[i + 1]);
            if matches!(
                pair,
                (b'u', b'e') | (b'o', b'e') | (b'a', b'e') | (b'a', b'a')
            ) && collapsible(b, i)
            {
                out.push(b[i]);
                i += 2;
                continue;
            }
        }
        out.push(b[i]);
        i += 1;
    }
    // Only ASCII bytes were copied, so this cannot fail.
    String::from_utf8(out).unwrap_or_default()
}

/// Transliteration variants of a standardized value, for blocking and comparison:
/// the blind fold, the DIN 5007-2 form and the [`translit_key`], without duplicates.
/// `müller` -> [`muller`, `mueller`]; `mueller` -> [`mueller`, `muller`].
pub fn translit_variants(s: &str) -> Vec<String> {
    if !folds_fully(s) {
        // Another script: no Latin transliteration variants, only the value itself.
        return vec![s.to_lowercase()];
    }
    let mut out = vec![fold_ascii(s)];
    for v in [translit_din(s), translit_key(s)] {
        if !out.contains(&v) {
            out.push(v);
        }
    }
    out
}

/// True when `a` and `b` are the same after transliteration (equal [`translit_key`]s).
/// This is an equivalence relation: reflexive, symmetric and transitive.
pub fn translit_equivalent(a: &str, b: &str) -> bool {
    a == b || translit_key(a) == translit_key(b)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn fold_ascii_matches_reference_transliterators() {
        // docs/check-values.md §6: unidecode 1.4.0 / deunicode 1.6.2 / any_ascii 0.3.3
        // columns, lower-cased (they agree on these rows).
        let rows = [
            ("M\u{fc}ller", "muller"),
            ("Mu\u{308}ller", "muller"),
            ("Stra\u{df}e", "strasse"),
            ("\u{1e9e}", "ss"),
            ("\u{fb01}sch", "fisch"),
            ("\u{ff2d}\u{fc}ller", "muller"),
            ("\u{2460}\u{2461}", "12"),
            ("\u{216b}", "xii"),
            ("\u{130}stanbul", "istanbul"),
            (
                "Ren\u{e9}e Zo\u{eb} \u{c5}ngstr\u{f6}m",
                "renee zoe angstrom",
            ),
            ("Dvo\u{159}\u{e1}k", "dvorak"),
            ("\u{de}\u{f3}r Gu\u{f0}mundsson", "thor gudmundsson"),
            ("\u{152}uvre", "oeuvre"),
            ("Fran\u{e7}ois", "francois"),
            ("Nguy\u{1ec5}n", "nguyen"),
        ];
        for (input, want) in rows {
            assert_eq!(fold_ascii(input), want, "{input:?}");
        }
        // docs/check-values.md §6: unidecode/deunicode give "Lukasz Oster AEbelo" and
        // "AEroskobing"; lower-cased.
        assert_eq!(
            fold_ascii("\u{141}ukasz \u{d8}ster \u{c6}bel\u{f8}"),
            "lukasz oster aebelo"
        );
        assert_eq!(fold_ascii("\u{c6}r\u{f8}sk\u{f8}bing"), "aeroskobing");
        // Scripts without an ASCII form here fold to nothing.
        assert_eq!(fold_ascii("用户"), "");
    }

    #[test]
    fn casefold_follows_case_folding_for_sharp_s() {
        // docs/check-values.md §6: Python casefold('Straße') = 'strasse', casefold('ẞ') = 'ss',
        // NFKC('ﬁsch') = 'fisch', NFKC of full-width Ｍ = M.
        assert_eq!(casefold("Stra\u{df}e"), "strasse");
        assert_eq!(casefold("\u{1e9e}"), "ss");
        assert_eq!(casefold("\u{fb01}sch"), "fisch");
        assert_eq!(casefold("\u{ff2d}\u{fc}ller"), "m\u{fc}ller");
        // Decomposed input comes out composed (NFC length 6, docs/check-values.md §6).
        assert_eq!(casefold("Mu\u{308}ller").chars().count(), 6);
        // Turkish policy (our choice): İ -> i without the combining dot.
        assert_eq!(casefold("\u{130}stanbul"), "istanbul");
        assert_eq!(casefold("ABC"), "abc");
    }

    #[test]
    fn clean_text_rules() {
        // Our conventions (module doc); expected values written by hand.
        assert_eq!(clean_text("  O'Brien  "), "obrien");
        assert_eq!(clean_text("Smith - Jones"), "smith-jones");
        assert_eq!(clean_text("Müller-Lüdenscheidt"), "müller-lüdenscheidt");
        assert_eq!(clean_text("St. Louis,  MO"), "st louis mo");
        assert_eq!(clean_text("-Anna-"), "anna");
        assert_eq!(clean_text("..."), "");
        assert_eq!(clean_text_keep("AT&T", &['&']), "at & t");
        assert_eq!(clean_text("Renée"), "renée");
    }

    #[test]
    fn din_5007_2_transliteration() {
        // DIN 5007-2 / ICAO Doc 9303 Part 3 (docs/methods.md §9; docs/check-values.md §6):
        // Müller -> MUELLER, Straße -> STRASSE, Gößmann -> GOESSMANN; Doc 9303 å -> aa,
        // æ -> ae, þ -> th.
        assert_eq!(translit_din("Müller"), "mueller");
        assert_eq!(translit_din("Straße"), "strasse");
        assert_eq!(translit_din("Gößmann"), "goessmann");
        assert_eq!(translit_din("Åberg"), "aaberg");
        assert_eq!(translit_din("Ærø"), "aeroe");
        assert_eq!(translit_din("Þór"), "thor");
    }

    #[test]
    fn umlaut_forms_share_a_key() {
        // docs/methods.md §9: build both the MULLER and MUELLER keys.
        for (a, b) in [
            ("müller", "mueller"),
            ("müller", "muller"),
            ("mueller", "muller"),
            ("schröder", "schroeder"),
            ("schroeder", "schroder"),
            ("günther", "guenther"),
            ("guenther", "gunther"),
            ("jörg", "joerg"),
            ("böhm", "bohm"),
            ("bräuer", "braeuer"),
            ("ålborg", "aalborg"),
            ("ålborg", "alborg"),
            ("groß", "gross"),
            ("müller-lüdenscheidt", "mueller-luedenscheidt"),
        ] {
            assert!(translit_equivalent(a, b), "{a} ~ {b}");
        }
    }

    #[test]
    fn names_with_vowel_pairs_are_not_merged() {
        // Real name pairs that must stay apart (common practice, no source).
        for (a, b) in [
            ("samuel", "samul"),
            ("michael", "michal"),
            ("manuel", "manul"),
            ("raphael", "raphal"),
            ("joel", "jol"),
            ("noel", "nol"),
            ("joe", "jo"),
            ("zoe", "zo"),
            ("sue", "su"),
            ("bauer", "baur"),
            ("jacques", "jacqs"),
        ] {
            assert!(!translit_equivalent(a, b), "{a} !~ {b}");
        }
        // Diacritics on such names still fold away.
        assert!(translit_equivalent("michaël", "michael"));
        assert!(translit_equivalent("zoë", "zoe"));
    }

    #[test]
    fn other_scripts_are_kept_for_comparison() {
        for s in ["Петров", "Παπαδόπουλος", "王", "محمد", "Müller-Петров"]
        {
            assert!(!folds_fully(s), "{s}");
            assert_eq!(fold_for_comparison(s), s.to_lowercase());
        }
        for s in ["Müller", "Ærø", "O'Brien", "Łódź", "straße", "12-b"] {
            assert!(folds_fully(s), "{s}");
        }
        // Different names in another script are not transliteration-equivalent.
        assert!(!translit_equivalent("петров", "соколова"));
        assert!(translit_equivalent("петров", "петров"));
        assert_eq!(translit_variants("петров"), vec!["петров"]);
        assert!(translit_equivalent("müller", "mueller"));
    }

    #[test]
    fn variants_contain_blind_and_din_forms() {
        assert_eq!(translit_variants("müller"), vec!["muller", "mueller"]);
        assert_eq!(translit_variants("mueller"), vec!["mueller", "muller"]);
        assert_eq!(translit_variants("muller"), vec!["muller"]);
        assert_eq!(translit_variants("straße"), vec!["strasse"]);
    }

    proptest! {
        #[test]
        fn fold_ascii_is_idempotent_ascii_lowercase(s in "\\PC{0,40}") {
            let f = fold_ascii(&s);
            prop_assert!(f.is_ascii());
            prop_assert!(!f.bytes().any(|b| b.is_ascii_uppercase()));
            prop_assert_eq!(fold_ascii(&f), f.clone());
        }

        #[test]
        fn fold_ascii_idempotent_on_latin(s in "[a-zA-ZäöüÄÖÜßøØåÅæÆœŒłŁđĐþÞéèêçñ ıİ-]{0,30}") {
            let f = fold_ascii(&s);
            prop_assert!(f.is_ascii());
            prop_assert_eq!(fold_ascii(&f), f);
        }

        #[test]
        fn translit_equivalent_is_symmetric(a in "[a-zäöüßåøæ]{0,12}", b in "[a-zäöüßåøæ]{0,12}") {
            prop_assert_eq!(translit_equivalent(&a, &b), translit_equivalent(&b, &a));
            prop_assert!(translit_equivalent(&a, &a));
        }

        #[test]
        fn umlaut_spellings_always_agree(stem in "[bcdfghklmnprst]{1,3}", tail in "[bcdfghklmnprst]{1,2}[aeiou]?[nrs]") {
            // A consonant, an umlaut, then more than a final `l`: all three spellings agree.
            let d = format!("{stem}ü{tail}");
            let e = format!("{stem}ue{tail}");
            let u = format!("{stem}u{tail}");
            prop_assert!(translit_equivalent(&d, &e));
            prop_assert!(translit_equivalent(&d, &u));
            prop_assert!(translit_equivalent(&e, &u));
        }

        #[test]
        fn latin_values_compare_in_their_ascii_folding(s in "[a-zA-ZäöüÄÖÜßøØåÅæÆœŒłŁéèêçñ' -]{0,30}") {
            prop_assert!(folds_fully(&s));
            prop_assert_eq!(fold_for_comparison(&s), fold_ascii(&s));
        }

        #[test]
        fn plain_ascii_fast_path_matches_the_general_path(
            s in "[a-zA-Z0-9 ]{0,30}|[a-zA-Z0-9 &.,'-]{0,30}|[a-zA-Z ]{0,8}[äöüéß][a-z ]{0,8}"
        ) {
            prop_assert_eq!(clean_text_keep(&s, &['&']), clean_text_general(&s, &['&']));
            prop_assert_eq!(clean_text(&s), clean_text_general(&s, &[]));
        }

        #[test]
        fn clean_text_output_is_clean(s in "\\PC{0,40}") {
            let c = clean_text(&s);
            prop_assert!(!c.starts_with(' ') && !c.ends_with(' ') && !c.contains("  "));
            prop_assert!(!c.starts_with('-') && !c.ends_with('-'));
            prop_assert_eq!(clean_text(&c), c.clone());
        }
    }
}
