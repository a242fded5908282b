//! Noise functions: the small ways people and systems garble a value.
//!
//! In: a clean value (and a random generator). Out: the garbled value, or `None` when
//! the value cannot carry this kind of noise (a one-letter name cannot get a
//! transposition, a date with day > 12 cannot have day and month swapped). Each
//! function makes exactly one kind of change, so the generator can count what it did.

use unicode_normalization::UnicodeNormalization;

use crate::util::Rng;

/// QWERTY neighbours of lower-case letters (for substitution and insertion typos).
fn keyboard_neighbours(c: char) -> &'static str {
    match c {
        'q' => "wa",
        'w' => "qes",
        'e' => "wrd",
        'r' => "etf",
        't' => "ryg",
        'y' => "tuh",
        'u' => "yij",
        'i' => "uok",
        'o' => "ipl",
        'p' => "ol",
        'a' => "qsz",
        's' => "awdx",
        'd' => "sefc",
        'f' => "drgv",
        'g' => "fthb",
        'h' => "gyjn",
        'j' => "hukm",
        'k' => "jil",
        'l' => "kop",
        'z' => "asx",
        'x' => "zsc",
        'c' => "xdv",
        'v' => "cfb",
        'b' => "vgn",
        'n' => "bhm",
        'm' => "njk",
        _ => "etaoinshr",
    }
}

/// A neighbouring key of `c`, keeping its case; never equal to `c` ignoring case.
fn neighbour(rng: &mut Rng, c: char) -> char {
    let lower = c.to_lowercase().next().unwrap_or(c);
    let options: Vec<char> = keyboard_neighbours(lower)
        .chars()
        .filter(|&n| n != lower)
        .collect();
    let n = *rng.pick(&options);
    if c.is_uppercase() {
        n.to_ascii_uppercase()
    } else {
        n
    }
}

/// The kind of a single-character edit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Edit {
    /// One character replaced by a neighbouring key.
    Substitution,
    /// One character left out.
    Deletion,
    /// One character typed twice or a neighbouring key typed as well.
    Insertion,
    /// Two adjacent, different characters swapped.
    Transposition,
}

/// Apply exactly one edit (optimal-string-alignment distance 1) to `s`.
///
/// Edits hit letters, and the first letter only rarely (people seldom mistype the start of
/// a word). Returns `None` if `s` has fewer than two letters.
pub fn typo(rng: &mut Rng, s: &str) -> Option<String> {
    let chars: Vec<char> = s.chars().collect();
    let letters: Vec<usize> = (0..chars.len())
        .filter(|&i| chars[i].is_alphabetic())
        .collect();
    if letters.len() < 2 {
        return None;
    }
    // Position: any letter but the first one, the first one in 10 % of cases.
    let pos = if rng.chance(0.1) {
        letters[0]
    } else {
        letters[1 + rng.below(letters.len() as u64 - 1) as usize]
    };
    let mut kind = match rng.below(100) {
        0..=34 => Edit::Substitution,
        35..=59 => Edit::Deletion,
        60..=79 => Edit::Insertion,
        _ => Edit::Transposition,
    };
    let mut out = chars.clone();
    if kind == Edit::Transposition {
        // Needs two different adjacent letters; prefer pos and its right neighbour.
        let swappable = |i: usize| {
            i + 1 < chars.len()
                && chars[i].is_alphabetic()
                && chars[i + 1].is_alphabetic()
                && chars[i] != chars[i + 1]
                && chars[i].is_uppercase() == chars[i + 1].is_uppercase()
        };
        let candidates: Vec<usize> = (0..chars.len().saturating_sub(1))
            .filter(|&i| swappable(i))
            .collect();
        if candidates.is_empty() {
            kind = Edit::Substitution;
        } else {
            let i = if swappable(pos) {
                pos
            } else {
                *rng.pick(&candidates)
            };
            out.swap(i, i + 1);
        }
    }
    match kind {
        Edit::Substitution => out[pos] = neighbour(rng, chars[pos]),
        Edit::Deletion => {
            out.remove(pos);
        }
        Edit::Insertion => {
            let c = if rng.chance(0.5) {
                chars[pos].to_lowercase().next().unwrap_or(chars[pos])
            } else {
                neighbour(rng, chars[pos].to_lowercase().next().unwrap_or(chars[pos]))
            };
            out.insert(pos + 1, c);
        }
        Edit::Transposition => {}
    }
    Some(out.into_iter().collect())
}

/// True when `s` contains a non-ASCII letter.
pub fn has_diacritics(s: &str) -> bool {
    !s.is_ascii()
}

/// German transliteration: ä → ae, ö → oe, ü → ue, ß → ss (others: accents dropped).
pub fn transliterate_german(s: &str) -> String {
    let mut out = String::with_capacity(s.len() + 4);
    for c in s.chars() {
        match c {
            'ä' => out.push_str("ae"),
            'ö' => out.push_str("oe"),
            'ü' => out.push_str("ue"),
            'Ä' => out.push_str("Ae"),
            'Ö' => out.push_str("Oe"),
            'Ü' => out.push_str("Ue"),
            'ß' => out.push_str("ss"),
            c if c.is_ascii() => out.push(c),
            c => out.push_str(&strip_diacritics(&c.to_string())),
        }
    }
    out
}

/// Drop accents and umlauts: Müller → Muller, José → Jose, François → Francois;
/// ß → ss and º → o (characters without a decomposition are spelled out).
pub fn strip_diacritics(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.nfd() {
        if unicode_normalization::char::is_combining_mark(c) {
            continue;
        }
        match c {
            'ß' => out.push_str("ss"),
            'º' => out.push('o'),
            'ª' => out.push('a'),
            c => out.push(c),
        }
    }
    out
}

/// ASCII letters and digits only, lower case, for e-mail local parts.
pub fn email_fold(s: &str, german: bool) -> String {
    let t = if german {
        transliterate_german(s)
    } else {
        strip_diacritics(s)
    };
    t.chars()
        .filter(|c| c.is_ascii_alphanumeric())
        .map(|c| c.to_ascii_lowercase())
        .collect()
}

/// Case noise: the whole value in upper or lower case. `None` if nothing would change.
pub fn change_case(rng: &mut Rng, s: &str) -> Option<String> {
    let out = if rng.chance(0.7) {
        s.to_uppercase()
    } else {
        s.to_lowercase()
    };
    (out != s).then_some(out)
}

/// Punctuation and spacing noise: drop or replace hyphens, apostrophes or full stops,
/// or add stray spaces. Always changes the value.
pub fn punctuation(rng: &mut Rng, s: &str) -> String {
    let has = |c: char| s.contains(c);
    let mut options: Vec<u8> = vec![0, 1];
    if has('-') {
        options.extend([2, 3]);
    }
    if has('\'') {
        options.push(4);
    }
    if has('.') {
        options.push(5);
    }
    if has(' ') {
        options.push(6);
    }
    match *rng.pick(&options) {
        0 => format!("{s} "),
        1 => format!(" {s}"),
        2 => s.replace('-', " "),
        3 => s.replace('-', ""),
        4 => s.replace('\'', if rng.chance(0.5) { "" } else { " " }),
        5 => s.replace('.', ""),
        _ => s.replacen(' ', "  ", 1),
    }
}

/// A given name reduced to its initial, with or without a full stop ("J." / "J").
pub fn initial(rng: &mut Rng, given: &str) -> Option<String> {
    let first = given.chars().next()?;
    Some(if rng.chance(0.75) {
        format!("{first}.")
    } else {
        first.to_string()
    })
}

/// A calendar date.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Date {
    /// Year.
    pub y: i32,
    /// Month 1-12.
    pub m: u32,
    /// Day 1-31.
    pub d: u32,
}

/// Days in month `m` of year `y` (Gregorian calendar).
pub fn days_in_month(y: i32, m: u32) -> u32 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if (y % 4 == 0 && y % 100 != 0) || y % 400 == 0 => 29,
        2 => 28,
        _ => 0,
    }
}

impl Date {
    /// A date if `y-m-d` exists.
    pub fn new(y: i32, m: u32, d: u32) -> Option<Date> {
        ((1..=12).contains(&m) && d >= 1 && d <= days_in_month(y, m)).then_some(Date { y, m, d })
    }

    /// Date of day number `z` counted from 1970-01-01 (H. Hinnant, "chrono-Compatible
    /// Low-Level Date Algorithms", civil_from_days).
    pub fn from_days(z: i64) -> Date {
        let (y, m, d) = crate::util::civil::civil_from_days(z);
        Date { y: y as i32, m, d }
    }

    /// Day number counted from 1970-01-01 (Hinnant, days_from_civil).
    pub fn to_days(self) -> i64 {
        let y = i64::from(self.y) - i64::from(self.m <= 2);
        let era = y.div_euclid(400);
        let yoe = y.rem_euclid(400);
        let m = i64::from(self.m);
        let doy = (153 * (if m > 2 { m - 3 } else { m + 9 }) + 2) / 5 + i64::from(self.d) - 1;
        let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
        era * 146_097 + doe - 719_468
    }

    /// `MM/DD/YYYY`.
    pub fn mdy(self) -> String {
        format!("{:02}/{:02}/{:04}", self.m, self.d, self.y)
    }

    /// `DD.MM.YYYY`.
    pub fn dmy(self) -> String {
        format!("{:02}.{:02}.{:04}", self.d, self.m, self.y)
    }

    /// `YYYY-MM-DD`.
    pub fn ymd(self) -> String {
        format!("{:04}-{:02}-{:02}", self.y, self.m, self.d)
    }

    /// A uniformly random date in `[from, to]`.
    pub fn random_between(rng: &mut Rng, from: Date, to: Date) -> Date {
        let a = from.to_days();
        let b = to.to_days();
        Date::from_days(a + rng.below((b - a + 1).max(1) as u64) as i64)
    }
}

/// Day and month swapped (a US/European mix-up). `None` if the result is no date or
/// equals the input.
pub fn swap_day_month(d: Date) -> Option<Date> {
    if d.d == d.m {
        return None;
    }
    Date::new(d.y, d.d, d.m)
}

/// One digit of `YYYYMMDD` changed, the result still a valid date with a year in
/// `1900..=2015`. `None` if twenty attempts find no such digit.
pub fn one_digit(rng: &mut Rng, d: Date) -> Option<Date> {
    let text = format!("{:04}{:02}{:02}", d.y, d.m, d.d);
    let bytes = text.as_bytes();
    for _ in 0..20 {
        // Typing errors are in the day, month or the last two digits of the year.
        let pos = *rng.pick(&[2usize, 3, 4, 5, 6, 7]);
        let new_digit = b'0' + rng.below(10) as u8;
        if new_digit == bytes[pos] {
            continue;
        }
        let mut b = bytes.to_vec();
        b[pos] = new_digit;
        let s = std::str::from_utf8(&b).ok()?;
        let y: i32 = s[0..4].parse().ok()?;
        let m: u32 = s[4..6].parse().ok()?;
        let dd: u32 = s[6..8].parse().ok()?;
        if !(1900..=2015).contains(&y) {
            continue;
        }
        if let Some(out) = Date::new(y, m, dd) {
            return Some(out);
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::{any, prop_assert, prop_assert_eq, prop_assert_ne, proptest};

    #[test]
    fn transliteration_examples() {
        // DIN 5007-2 / ICAO 9303 German convention (see docs/check-values.md §6).
        assert_eq!(transliterate_german("Müller"), "Mueller");
        assert_eq!(transliterate_german("Straße"), "Strasse");
        assert_eq!(transliterate_german("Gößmann"), "Goessmann");
        assert_eq!(strip_diacritics("Müller"), "Muller");
        assert_eq!(strip_diacritics("José"), "Jose");
        assert_eq!(strip_diacritics("François"), "Francois");
        assert_eq!(strip_diacritics("Ibáñez"), "Ibanez");
        assert_eq!(strip_diacritics("Groß"), "Gross");
        assert_eq!(strip_diacritics("3º B"), "3o B");
        assert_eq!(email_fold("O'Brien-Smith", false), "obriensmith");
        assert_eq!(email_fold("Jürgen", true), "juergen");
    }

    #[test]
    fn date_round_trip_and_formats() {
        // 1970-01-01 is day 0; 2000-03-01 is day 11017 (common practice, no source;
        // checked by hand: 30 years * 365 + 7 leap days + 59 days of 2000 = 11017).
        assert_eq!(
            Date::from_days(0),
            Date {
                y: 1970,
                m: 1,
                d: 1
            }
        );
        assert_eq!(
            Date {
                y: 2000,
                m: 3,
                d: 1
            }
            .to_days(),
            11_017
        );
        for z in -40_000..40_000 {
            assert_eq!(Date::from_days(z).to_days(), z);
        }
        let d = Date::new(1984, 7, 5).unwrap();
        assert_eq!(d.mdy(), "07/05/1984");
        assert_eq!(d.dmy(), "05.07.1984");
        assert_eq!(d.ymd(), "1984-07-05");
        assert!(Date::new(2023, 2, 29).is_none());
        assert!(Date::new(2024, 2, 29).is_some());
    }

    #[test]
    fn swap_needs_a_day_that_is_a_month() {
        assert_eq!(
            swap_day_month(Date::new(1984, 7, 5).unwrap()),
            Date::new(1984, 5, 7)
        );
        assert_eq!(swap_day_month(Date::new(1984, 7, 25).unwrap()), None);
        assert_eq!(swap_day_month(Date::new(1984, 7, 7).unwrap()), None);
    }

    #[test]
    fn typo_kinds_all_occur() {
        let mut rng = Rng::new(1);
        let mut longer = 0;
        let mut shorter = 0;
        let mut same_len = 0;
        for _ in 0..1000 {
            let t = typo(&mut rng, "Margarethe").unwrap();
            match t.chars().count() {
                11 => longer += 1,
                9 => shorter += 1,
                10 => same_len += 1,
                n => panic!("length {n}: {t}"),
            }
        }
        assert!(
            longer > 100 && shorter > 150 && same_len > 300,
            "{longer} {shorter} {same_len}"
        );
        assert_eq!(typo(&mut rng, "J."), None);
        assert_eq!(typo(&mut rng, ""), None);
    }

    proptest! {
        /// A typo is exactly one edit: optimal string alignment distance 1 (strsim).
        #[test]
        fn typo_is_one_edit(s in "[A-Za-zäöüßéèçñ' -]{2,20}", seed in any::<u64>()) {
            let mut rng = Rng::new(seed);
            if let Some(t) = typo(&mut rng, &s) {
                prop_assert_eq!(strsim::osa_distance(&s, &t), 1, "{:?} -> {:?}", s, t);
            } else {
                prop_assert!(s.chars().filter(|c| c.is_alphabetic()).count() < 2);
            }
        }

        /// Transliteration leaves no non-ASCII letters in the Latin-1 range used here.
        #[test]
        fn transliteration_is_ascii(s in "[A-Za-zäöüÄÖÜßéèêàâçñáíóúÁÉÍÓÚ ]{0,20}") {
            prop_assert!(transliterate_german(&s).is_ascii());
            prop_assert!(strip_diacritics(&s).is_ascii());
            // Plain ASCII is left alone.
            let ascii: String = s.chars().filter(char::is_ascii).collect();
            prop_assert_eq!(strip_diacritics(&ascii), ascii.clone());
            prop_assert_eq!(transliterate_german(&ascii), ascii);
        }

        /// A one-digit date error changes exactly one digit and gives a valid date.
        #[test]
        fn one_digit_changes_one_digit(days in -20_000i64..13_000, seed in any::<u64>()) {
            let d = Date::from_days(days);
            let mut rng = Rng::new(seed);
            if let Some(e) = one_digit(&mut rng, d) {
                let a = format!("{:04}{:02}{:02}", d.y, d.m, d.d);
                let b = format!("{:04}{:02}{:02}", e.y, e.m, e.d);
                let diff = a.bytes().zip(b.bytes()).filter(|(x, y)| x != y).count();
                prop_assert_eq!(diff, 1);
                prop_assert!(Date::new(e.y, e.m, e.d).is_some());
            }
        }

        /// Punctuation noise always changes the value; case noise changes it when it
        /// says so.
        #[test]
        fn punctuation_and_case_change_the_value(s in "[A-Za-z'. -]{1,20}", seed in any::<u64>()) {
            let mut rng = Rng::new(seed);
            prop_assert_ne!(punctuation(&mut rng, &s), s.clone());
            if let Some(c) = change_case(&mut rng, &s) {
                prop_assert_ne!(&c, &s);
                prop_assert_eq!(c.to_lowercase(), s.to_lowercase());
            }
        }
    }
}
