//! Dates (birth dates): parse per the source's [`DateOrder`], write ISO 8601.
//!
//! In: a raw date string and the source's date order. Out: `YYYY-MM-DD`, or invalid.
//! - Separators `-`, `/`, `.` and spaces (also mixed, e.g. `17. 5. 1980`); a trailing
//!   time (`1980-05-17 00:00:00`, `1980-05-17T00:00:00Z`) is ignored; `YYYYMMDD` with
//!   eight digits is read as year-month-day.
//! - A four-digit first field is always a year (`1980/05/17` is year-month-day even in a
//!   day-first source); otherwise the source's order decides.
//! - Month names and three-letter abbreviations in English, German, French and Spanish
//!   (`17 May 1980`, `May 17, 1980`, `17. Mai 1980`); with a month name the four-digit
//!   field is the year and the other one the day.
//! - Two-digit years: `00`..=[`TWO_DIGIT_YEAR_PIVOT`] are 2000..=2025, the rest
//!   1926..=1999. A fixed pivot keeps results reproducible; these are birth dates, so
//!   a century in the future is never meant. Such values count as repaired.
//! - Impossible dates (month 13, 30 February, 29 February 1900) and years outside
//!   [`MIN_YEAR`]..=[`MAX_YEAR`] are invalid.

use super::{Cleaned, DateOrder};

/// Two-digit years up to this value are read as 20yy, larger ones as 19yy.
pub const TWO_DIGIT_YEAR_PIVOT: u32 = 25;
/// Earliest accepted year (older values are placeholders such as `0001-01-01`).
pub const MIN_YEAR: i32 = 1850;
/// Latest accepted year (later values are placeholders such as `9999-12-31`).
pub const MAX_YEAR: i32 = 2100;

/// Whether `y` is a Gregorian leap year.
pub fn is_leap(y: i32) -> bool {
    (y % 4 == 0 && y % 100 != 0) || y % 400 == 0
}

/// Days in month `m` (1-12) of year `y`.
pub fn days_in_month(y: i32, m: u8) -> u8 {
    match m {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if is_leap(y) => 29,
        2 => 28,
        _ => 0,
    }
}

const MONTHS: &[(&str, u8)] = &[
    ("january", 1),
    ("february", 2),
    ("march", 3),
    ("april", 4),
    ("may", 5),
    ("june", 6),
    ("july", 7),
    ("august", 8),
    ("september", 9),
    ("sept", 9),
    ("october", 10),
    ("november", 11),
    ("december", 12),
    ("januar", 1),
    ("jänner", 1),
    ("jän", 1),
    ("februar", 2),
    ("märz", 3),
    ("mär", 3),
    ("mai", 5),
    ("juni", 6),
    ("juli", 7),
    ("oktober", 10),
    ("okt", 10),
    ("dezember", 12),
    ("dez", 12),
    ("janvier", 1),
    ("février", 2),
    ("fevrier", 2),
    ("mars", 3),
    ("avril", 4),
    ("avr", 4),
    ("juin", 6),
    ("juillet", 7),
    ("juil", 7),
    ("août", 8),
    ("aout", 8),
    ("septembre", 9),
    ("octobre", 10),
    ("novembre", 11),
    ("décembre", 12),
    ("decembre", 12),
    ("déc", 12),
    ("enero", 1),
    ("ene", 1),
    ("febrero", 2),
    ("marzo", 3),
    ("abril", 4),
    ("abr", 4),
    ("mayo", 5),
    ("junio", 6),
    ("julio", 7),
    ("agosto", 8),
    ("ago", 8),
    ("septiembre", 9),
    ("setiembre", 9),
    ("octubre", 10),
    ("noviembre", 11),
    ("diciembre", 12),
    ("dic", 12),
];

fn month_number(word: &str) -> Option<u8> {
    let w = word.to_lowercase();
    if let Some(&(_, m)) = MONTHS.iter().find(|(name, _)| *name == w) {
        return Some(m);
    }
    // English three-letter abbreviations (jan, feb, ...) double as most others.
    const EN3: [&str; 12] = [
        "jan", "feb", "mar", "apr", "may", "jun", "jul", "aug", "sep", "oct", "nov", "dec",
    ];
    EN3.iter().position(|a| *a == w).map(|i| i as u8 + 1)
}

enum Field<'a> {
    Num(&'a str),
    Month(u8),
}

/// Expand a year field; returns the year and whether it had two digits.
fn year_of(s: &str) -> Option<(i32, bool)> {
    let v: u32 = s.parse().ok()?;
    match s.len() {
        4 => Some((v as i32, false)),
        2 => {
            let y = if v <= TWO_DIGIT_YEAR_PIVOT {
                2000 + v
            } else {
                1900 + v
            };
            Some((y as i32, true))
        }
        _ => None,
    }
}

fn small(s: &str) -> Option<u8> {
    if s.is_empty() || s.len() > 2 {
        return None;
    }
    s.parse().ok()
}

fn check(y: i32, m: u8, d: u8) -> Option<(i32, u8, u8)> {
    if !(MIN_YEAR..=MAX_YEAR).contains(&y) || !(1..=12).contains(&m) {
        return None;
    }
    (d >= 1 && d <= days_in_month(y, m)).then_some((y, m, d))
}

/// Strip a trailing time part: `1980-05-17 00:00:00`, `1980-05-17T00:00Z`.
fn strip_time(s: &str) -> &str {
    if let Some(colon) = s.find(':') {
        let head = &s[..colon];
        if let Some(cut) = head.rfind([' ', 'T']) {
            return s[..cut].trim_end();
        }
    }
    s
}

/// Parse a date; returns the date and whether a repair (two-digit year) was needed.
fn parse_inner(raw: &str, order: DateOrder) -> Option<((i32, u8, u8), bool)> {
    let s = strip_time(raw.trim());
    if s.len() == 8 && s.bytes().all(|b| b.is_ascii_digit()) {
        let y = s[..4].parse().ok()?;
        return Some((
            check(y, s[4..6].parse().ok()?, s[6..].parse().ok()?)?,
            false,
        ));
    }
    let fields: Vec<Field<'_>> = s
        .split(['-', '/', '.', ',', ' '])
        .filter(|f| !f.is_empty())
        .map(|f| {
            if f.bytes().all(|b| b.is_ascii_digit()) {
                Some(Field::Num(f))
            } else {
                month_number(f).map(Field::Month)
            }
        })
        .collect::<Option<_>>()?;
    if fields.len() != 3 {
        return None;
    }
    let months = fields
        .iter()
        .filter(|f| matches!(f, Field::Month(_)))
        .count();
    if months > 1 {
        return None;
    }
    if months == 1 {
        let m = fields.iter().find_map(|f| match f {
            Field::Month(m) => Some(*m),
            Field::Num(_) => None,
        })?;
        let nums: Vec<&str> = fields
            .iter()
            .filter_map(|f| match f {
                Field::Num(n) => Some(*n),
                Field::Month(_) => None,
            })
            .collect();
        let (day, year) = if nums[0].len() == 4 {
            (nums[1], nums[0])
        } else if nums[1].len() == 4 {
            (nums[0], nums[1])
        } else {
            // Both short: "17 May 80" / "May 17 80" / "80 May 17".
            match order {
                DateOrder::Ymd => (nums[1], nums[0]),
                DateOrder::Dmy | DateOrder::Mdy | DateOrder::Country => (nums[0], nums[1]),
            }
        };
        let (y, two) = year_of(year)?;
        return Some((check(y, m, small(day)?)?, two));
    }
    let n: Vec<&str> = fields
        .iter()
        .map(|f| match f {
            Field::Num(n) => *n,
            Field::Month(_) => "",
        })
        .collect();
    let (y, m, d) = if n[0].len() == 4 {
        (n[0], n[1], n[2])
    } else {
        match order {
            DateOrder::Ymd => (n[0], n[1], n[2]),
            DateOrder::Dmy | DateOrder::Country => (n[2], n[1], n[0]),
            DateOrder::Mdy => (n[2], n[0], n[1]),
        }
    };
    let (y, two) = year_of(y)?;
    Some((check(y, small(m)?, small(d)?)?, two))
}

/// Parse a date string per `order` (rules in the module doc) into (year, month, day).
/// `None` for anything that is not a possible date.
pub fn parse_date(s: &str, order: DateOrder) -> Option<(i32, u8, u8)> {
    parse_inner(s, order).map(|(d, _)| d)
}

/// A date without a year or without a day, written in ISO 8601's reduced forms:
/// `--MM-DD` (day and month, as XML Schema's `gMonthDay`) or `YYYY-MM` (year and month).
///
/// Read from two fields: `--05-17` itself; a four-digit field with a month (`1980-05`,
/// `05/1980`, `May 1980`); or a day and a month, ordered as `order` says (`17.05.`,
/// `05/17`, `17 May`; year-first sources write month-day). The day must exist in the
/// month of some year (29 February is allowed).
pub fn parse_partial(raw: &str, order: DateOrder) -> Option<String> {
    let s = raw.trim();
    // `--MM-DD` is month-day in any source order.
    let (s, order) = match s.strip_prefix("--") {
        Some(rest) => (rest, DateOrder::Ymd),
        None => (s, order),
    };
    let fields: Vec<&str> = s
        .split(['-', '/', '.', ',', ' '])
        .filter(|f| !f.is_empty())
        .collect();
    let [a, b] = fields[..] else {
        return None;
    };
    let month_of = |f: &str| -> Option<u8> {
        if f.bytes().all(|c| c.is_ascii_digit()) {
            small(f).filter(|m| (1..=12).contains(m))
        } else {
            month_number(f)
        }
    };
    let is_year = |f: &str| f.len() == 4 && f.bytes().all(|c| c.is_ascii_digit());
    let year_month = |y: &str, m: &str| -> Option<String> {
        let y: i32 = y.parse().ok()?;
        let m = month_of(m)?;
        (MIN_YEAR..=MAX_YEAR)
            .contains(&y)
            .then(|| format!("{y:04}-{m:02}"))
    };
    if is_year(a) {
        return year_month(a, b);
    }
    if is_year(b) {
        return year_month(b, a);
    }
    let named = |f: &str| !f.bytes().all(|c| c.is_ascii_digit());
    let (d, m) = if named(a) {
        (b, a)
    } else if named(b) {
        (a, b)
    } else {
        match order {
            DateOrder::Dmy | DateOrder::Country => (a, b),
            DateOrder::Mdy | DateOrder::Ymd => (b, a),
        }
    };
    let m = month_of(m)?;
    let d = small(d)?;
    (d >= 1 && d <= days_in_month(2000, m)).then(|| format!("--{m:02}-{d:02}"))
}

/// Standardize a date to `YYYY-MM-DD`; a date without a year or without a day to its
/// reduced form ([`parse_partial`]).
pub fn normalize_date(raw: &str, order: DateOrder) -> Cleaned {
    match parse_inner(raw, order) {
        None => match parse_partial(raw, order) {
            Some(p) if raw.trim() == p => Cleaned::Parsed(p),
            Some(p) => Cleaned::Repaired(p),
            None => Cleaned::Invalid,
        },
        Some(((y, m, d), repaired)) => {
            let iso = format!("{y:04}-{m:02}-{d:02}");
            if repaired {
                Cleaned::Repaired(iso)
            } else {
                Cleaned::Parsed(iso)
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    #[test]
    fn orders_and_separators() {
        // ISO 8601 calendar dates; day/month orders as written in DE/UK (DMY) and US (MDY)
        // (common practice, no source).
        assert_eq!(
            parse_date("1980-05-17", DateOrder::Ymd),
            Some((1980, 5, 17))
        );
        assert_eq!(
            parse_date("17.05.1980", DateOrder::Dmy),
            Some((1980, 5, 17))
        );
        assert_eq!(
            parse_date("17/05/1980", DateOrder::Dmy),
            Some((1980, 5, 17))
        );
        assert_eq!(
            parse_date("05/17/1980", DateOrder::Mdy),
            Some((1980, 5, 17))
        );
        assert_eq!(parse_date("5/7/1980", DateOrder::Mdy), Some((1980, 5, 7)));
        assert_eq!(parse_date("5/7/1980", DateOrder::Dmy), Some((1980, 7, 5)));
        assert_eq!(
            parse_date("17 05 1980", DateOrder::Dmy),
            Some((1980, 5, 17))
        );
        assert_eq!(
            parse_date("17. 5. 1980", DateOrder::Dmy),
            Some((1980, 5, 17))
        );
        assert_eq!(parse_date("19800517", DateOrder::Dmy), Some((1980, 5, 17)));
        // A four-digit first field is a year whatever the order.
        assert_eq!(
            parse_date("1980/05/17", DateOrder::Dmy),
            Some((1980, 5, 17))
        );
        assert_eq!(
            parse_date("1980-05-17 00:00:00", DateOrder::Ymd),
            Some((1980, 5, 17))
        );
        assert_eq!(
            parse_date("1980-05-17T00:00:00Z", DateOrder::Ymd),
            Some((1980, 5, 17))
        );
    }

    #[test]
    fn month_names() {
        assert_eq!(
            parse_date("17 May 1980", DateOrder::Dmy),
            Some((1980, 5, 17))
        );
        assert_eq!(
            parse_date("May 17, 1980", DateOrder::Mdy),
            Some((1980, 5, 17))
        );
        assert_eq!(
            parse_date("17. März 1980", DateOrder::Dmy),
            Some((1980, 3, 17))
        );
        assert_eq!(
            parse_date("1 août 1980", DateOrder::Dmy),
            Some((1980, 8, 1))
        );
        assert_eq!(parse_date("3 de diciembre de 1980", DateOrder::Dmy), None);
        assert_eq!(
            parse_date("3-dic-1980", DateOrder::Dmy),
            Some((1980, 12, 3))
        );
        assert_eq!(parse_date("17-Sep-80", DateOrder::Dmy), Some((1980, 9, 17)));
    }

    #[test]
    fn two_digit_year_pivot() {
        // Our documented pivot: 00..=25 -> 20yy, 26..=99 -> 19yy.
        assert_eq!(
            normalize_date("17.05.80", DateOrder::Dmy),
            Cleaned::Repaired("1980-05-17".into())
        );
        assert_eq!(
            normalize_date("01/02/25", DateOrder::Mdy),
            Cleaned::Repaired("2025-01-02".into())
        );
        assert_eq!(
            normalize_date("01/02/26", DateOrder::Mdy),
            Cleaned::Repaired("1926-01-02".into())
        );
        assert_eq!(
            normalize_date("1980-05-17", DateOrder::Mdy),
            Cleaned::Parsed("1980-05-17".into())
        );
    }

    #[test]
    fn impossible_dates() {
        // Gregorian calendar rules: 1900 not a leap year, 2000 is (common knowledge).
        assert_eq!(parse_date("1980-02-30", DateOrder::Ymd), None);
        assert_eq!(parse_date("1980-13-01", DateOrder::Ymd), None);
        assert_eq!(parse_date("00.00.0000", DateOrder::Dmy), None);
        assert_eq!(parse_date("1900-02-29", DateOrder::Ymd), None);
        assert_eq!(
            parse_date("2000-02-29", DateOrder::Ymd),
            Some((2000, 2, 29))
        );
        assert_eq!(
            parse_date("1984-02-29", DateOrder::Ymd),
            Some((1984, 2, 29))
        );
        assert_eq!(parse_date("0001-01-01", DateOrder::Ymd), None);
        assert_eq!(parse_date("9999-12-31", DateOrder::Ymd), None);
        assert_eq!(parse_date("31/04/1980", DateOrder::Dmy), None);
        assert_eq!(parse_date("1980-05", DateOrder::Ymd), None);
        assert_eq!(parse_date("hello", DateOrder::Ymd), None);
        assert_eq!(parse_date("", DateOrder::Ymd), None);
        assert_eq!(parse_date("123-05-17", DateOrder::Ymd), None);
    }

    proptest! {
        #[test]
        fn iso_round_trip(y in 1850i32..=2100, m in 1u8..=12, d in 1u8..=31) {
            let s = format!("{y:04}-{m:02}-{d:02}");
            let got = parse_date(&s, DateOrder::Dmy);
            if d <= days_in_month(y, m) {
                prop_assert_eq!(got, Some((y, m, d)));
                let dmy = format!("{d}.{m}.{y}");
                prop_assert_eq!(parse_date(&dmy, DateOrder::Dmy), Some((y, m, d)));
                let mdy = format!("{m}/{d}/{y}");
                prop_assert_eq!(parse_date(&mdy, DateOrder::Mdy), Some((y, m, d)));
            } else {
                prop_assert_eq!(got, None);
            }
        }

        #[test]
        fn never_panics(s in "\\PC{0,30}") {
            let _ = normalize_date(&s, DateOrder::Dmy);
            let _ = normalize_date(&s, DateOrder::Mdy);
        }
    }

    #[test]
    fn partial_dates_in_reduced_iso_forms() {
        // ISO 8601-1:2019 reduced precision: YYYY-MM; XML Schema 1.1 gMonthDay: --MM-DD.
        for (raw, order, want) in [
            ("--05-17", DateOrder::Ymd, "--05-17"),
            ("17.05.", DateOrder::Dmy, "--05-17"),
            ("17/05", DateOrder::Dmy, "--05-17"),
            ("05/17", DateOrder::Mdy, "--05-17"),
            ("17 May", DateOrder::Mdy, "--05-17"),
            ("Mai 17", DateOrder::Dmy, "--05-17"),
            ("29.02.", DateOrder::Dmy, "--02-29"),
            ("1980-05", DateOrder::Dmy, "1980-05"),
            ("05/1980", DateOrder::Mdy, "1980-05"),
            ("May 1980", DateOrder::Dmy, "1980-05"),
        ] {
            assert_eq!(
                normalize_date(raw, order).into_value().as_deref(),
                Some(want),
                "{raw}"
            );
            // Read again: the same value.
            assert_eq!(
                normalize_date(want, order).into_value().as_deref(),
                Some(want)
            );
        }
        for raw in ["30.02.", "13/13", "1849-05", "17", "05/17/80/1"] {
            assert_eq!(
                normalize_date(raw, DateOrder::Dmy),
                Cleaned::Invalid,
                "{raw}"
            );
        }
        assert_eq!(
            normalize_date("--05-17", DateOrder::Ymd),
            Cleaned::Parsed("--05-17".into())
        );
    }

    #[test]
    fn date_order_per_record_country() {
        // The United States writes month first, Germany day first, Japan year first
        // (national conventions, from memory).
        assert_eq!(DateOrder::of_country(Some("US")), DateOrder::Mdy);
        assert_eq!(DateOrder::of_country(Some("DE")), DateOrder::Dmy);
        assert_eq!(DateOrder::of_country(Some("JP")), DateOrder::Ymd);
        assert_eq!(DateOrder::of_country(None), DateOrder::Dmy);
        let c = DateOrder::Country;
        let iso = |raw: &str, country: &str| {
            normalize_date(raw, c.for_record(Some(country))).into_value()
        };
        assert_eq!(iso("05/04/1980", "US").as_deref(), Some("1980-05-04"));
        assert_eq!(iso("05/04/1980", "FR").as_deref(), Some("1980-04-05"));
        assert_eq!(DateOrder::Dmy.for_record(Some("US")), DateOrder::Dmy);
    }

    #[test]
    fn plain_number_dates() {
        // YYYYMMDD, ISO 8601 basic format.
        assert_eq!(
            normalize_date("19800517", DateOrder::Dmy),
            Cleaned::Parsed("1980-05-17".into())
        );
        assert_eq!(normalize_date("19800230", DateOrder::Dmy), Cleaned::Invalid);
    }
}
