//! American Soundex.
//!
//! In: a name, already folded to ASCII by the caller (the standardize stage turns
//! "Müller" into "MUELLER"/"MULLER" first). Out: the letter + 3 digits code, e.g. `R163`,
//! or an empty string when the input has no ASCII letter.
//!
//! Rules (US National Archives, "The Soundex Indexing System", 2007; docs/methods.md §5):
//! keep the first letter; code B F P V → 1, C G J K Q S X Z → 2, D T → 3, L → 4,
//! M N → 5, R → 6; A E I O U Y are not coded but separate equal codes (Tymczak → T522);
//! H and W are not coded and do not separate (Ashcraft → A261); letters with the same code
//! side by side are coded once, the first letter included (Pfister → P236); pad with zeros
//! or cut to four characters.
//!
//! Anything that is not an ASCII letter (digits, spaces, apostrophes, hyphens and non-ASCII
//! letters) is skipped as if absent, so "O'Brien" is coded as "OBrien" and "van der Berg"
//! as "vanderBerg" (NARA says prefixes such as van/de may be coded with and without; build
//! both keys if you want both). Case does not matter.
//!
//! Agreement with the `rphonetic` crate (4.0.0, `Soundex::default()`): identical on ASCII
//! input (checked by a property test). It differs on non-ASCII input: rphonetic keeps every
//! Unicode letter, so it codes "ſmith" (long s, upper-cased to S) as S530 where we skip the
//! ſ and give M300, and it panics on letters whose upper case is not ASCII, such as "Müller"
//! (docs/check-values.md §2). Here non-ASCII input never panics.

/// Soundex digit per letter A..Z: b'0' = vowel or Y (separates), b'-' = H or W (transparent).
const CODES: &[u8; 26] = b"0123012-02245501262301-202";

/// American Soundex code of `name`: an ASCII capital and three digits, or `""` when `name`
/// contains no ASCII letter.
///
/// ```
/// use samekey::compare::strings::soundex;
/// assert_eq!(soundex("Robert"), "R163");
/// assert_eq!(soundex("Tymczak"), "T522");
/// assert_eq!(soundex("42"), "");
/// ```
pub fn soundex(name: &str) -> String {
    let mut code = [b'0'; 4];
    let mut len = 0usize;
    let mut last = b'0';
    // Bytes of multi-byte UTF-8 characters are never ASCII letters, so scanning bytes skips
    // non-ASCII characters whole.
    for b in name.bytes().filter(u8::is_ascii_alphabetic) {
        let letter = b.to_ascii_uppercase();
        let digit = CODES[usize::from(letter - b'A')];
        if len == 0 {
            code[0] = letter;
            len = 1;
            // The first letter's code blocks an equal code right after it (Pfister).
            last = if digit == b'-' { b'0' } else { digit };
            continue;
        }
        match digit {
            b'-' => {}
            b'0' => last = b'0',
            d => {
                if d != last {
                    code[len] = d;
                    len += 1;
                    if len == code.len() {
                        break;
                    }
                }
                last = d;
            }
        }
    }
    if len == 0 {
        return String::new();
    }
    code.iter().map(|&b| char::from(b)).collect()
}

/// The Soundex code of a standardized value as blocking keys and comparison levels both
/// use it: ASCII-folded by [`fold_ascii`](crate::standardize::fold_ascii) (`Müller` ->
/// `muller`, letters of other scripts dropped), then [`soundex`]. `None` when no ASCII
/// letter is left. One function for both stages, so a value gets the same code in a
/// blocking key and in a comparison.
///
/// ```
/// use samekey::compare::strings::soundex_of_value;
/// assert_eq!(soundex_of_value("Müller").as_deref(), Some("M460"));
/// assert_eq!(soundex_of_value("Петров"), None);
/// ```
pub fn soundex_of_value(value: &str) -> Option<String> {
    let code = soundex(&crate::standardize::fold_ascii(value));
    (!code.is_empty()).then_some(code)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;
    use rphonetic::Encoder;

    /// Every published code of docs/check-values.md §2 with its source: NARA = "The Soundex Indexing
    /// System" (archives.gov, 2007); NARA-old = older NARA leaflet as reproduced by genealogy
    /// sites; Knuth = TAOCP Vol. 3 §6; FS-wiki = FamilySearch Research Wiki "Soundex";
    /// common = commonly quoted examples (e.g. Wikipedia "Soundex"). jellyfish 1.3.0 and
    /// rphonetic 4.0.0 give the same codes for all of them.
    const PUBLISHED: &[(&str, &str, &str)] = &[
        ("Washington", "W252", "NARA"),
        ("Lee", "L000", "NARA"),
        ("Gutierrez", "G362", "NARA"),
        ("Pfister", "P236", "NARA"),
        ("Jackson", "J250", "NARA"),
        ("Tymczak", "T522", "NARA"),
        ("Ashcraft", "A261", "NARA"),
        ("Robert", "R163", "common"),
        ("Rupert", "R163", "common"),
        ("Rubin", "R150", "common"),
        ("Ashcroft", "A261", "common"),
        ("Honeyman", "H555", "common"),
        ("Campbell", "C514", "FS-wiki"),
        ("Tomzak", "T522", "FS-wiki"),
        ("Roses", "R220", "FS-wiki"),
        ("Carwruth", "C630", "FS-wiki"),
        ("Kuhne", "K500", "NARA-old"),
        ("Ebell", "E140", "NARA-old"),
        ("Ebelson", "E142", "NARA-old"),
        ("Kelly", "K400", "NARA-old"),
        ("Buerck", "B620", "NARA-old"),
        ("Lloyd", "L300", "NARA-old"),
        ("Schaefer", "S160", "NARA-old"),
        ("Euler", "E460", "Knuth"),
        ("Ellery", "E460", "Knuth"),
        ("Gauss", "G200", "Knuth"),
        ("Ghosh", "G200", "Knuth"),
        ("Hilbert", "H416", "Knuth"),
        ("Heilbronn", "H416", "Knuth"),
        ("Knuth", "K530", "Knuth"),
        ("Kant", "K530", "Knuth"),
        ("Ladd", "L300", "Knuth"),
        ("Lukasiewicz", "L222", "Knuth"),
        ("Lissajous", "L222", "Knuth"),
    ];

    #[test]
    fn published_codes() {
        for &(name, want, src) in PUBLISHED {
            assert_eq!(soundex(name), want, "soundex({name}) ({src})");
            assert_eq!(soundex(&name.to_uppercase()), want, "upper-case {name}");
            assert_eq!(soundex(&name.to_lowercase()), want, "lower-case {name}");
        }
    }

    #[test]
    fn computed_codes() {
        // Computed by jellyfish 1.3.0 and rphonetic 4.0.0 (docs/check-values.md §2).
        assert_eq!(soundex("O'Brien"), "O165");
        assert_eq!(soundex("van der Berg"), "V536");
        assert_eq!(soundex("X"), "X000");
        // jellyfish 1.3.0 returns "" for "".
        assert_eq!(soundex(""), "");
        // jellyfish 1.3.0 gives M460 for "Müller" (docs/check-values.md §2); skipping ü gives the same.
        assert_eq!(soundex("Müller"), "M460");
    }

    #[test]
    fn values_are_folded_before_coding() {
        // "Ösen" folds to "osen": O250 (computed by hand from the NARA rules above).
        assert_eq!(soundex_of_value("Ösen").as_deref(), Some("O250"));
        // A value mixing scripts keeps its Latin letters, folded: the same code as "Ösen".
        assert_eq!(soundex_of_value("Ösen Иван").as_deref(), Some("O250"));
        assert_eq!(soundex_of_value("Иван"), None);
        assert_eq!(soundex_of_value("--"), None);
    }

    #[test]
    fn no_letters_gives_empty() {
        assert_eq!(soundex("  -'42 "), "");
        assert_eq!(soundex("ßü"), "");
    }

    #[test]
    fn differs_from_rphonetic_on_non_ascii_letters() {
        // Documented difference (module docs): rphonetic upper-cases ſ to S and codes it.
        assert_eq!(rphonetic::Soundex::default().encode("ſmith"), "S530");
        assert_eq!(soundex("ſmith"), "M300");
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(3000))]

        #[test]
        fn equals_rphonetic_on_ascii(name in prop_oneof![
            "[A-Za-z]{0,12}",
            "[BFPVCGSDTLMNRHWAEIOUY]{0,14}",
            "[a-zA-Z '\\-]{0,20}",
            "[ -~]{0,20}",
        ]) {
            let ours = soundex(&name);
            let theirs = rphonetic::Soundex::default().encode(&name);
            prop_assert_eq!(ours, theirs, "name {:?}", name);
        }

        #[test]
        fn shape(name in "\\PC{0,20}") {
            let code = soundex(&name);
            if name.bytes().any(|b| b.is_ascii_alphabetic()) {
                let b = code.as_bytes();
                prop_assert_eq!(b.len(), 4);
                prop_assert!(b[0].is_ascii_uppercase());
                prop_assert!(b[1..].iter().all(|d| (b'0'..=b'6').contains(d)));
            } else {
                prop_assert_eq!(code, "");
            }
        }
    }
}
