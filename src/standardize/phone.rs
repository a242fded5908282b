//! Telephone numbers to E.164.
//!
//! In: a raw number and the default region (ISO 3166 alpha-2: the record's own country
//! when it has one, else the source's). Out: the E.164 string (`+` country code and
//! national significant number, at most 15 digits, ITU-T E.164) for valid numbers only;
//! anything else is invalid (CHECK_VALUES.md §5, note 2). Extensions (`ext. 123`,
//! `x123`) are dropped from the value. National trunk prefixes (`0`, `(0)`, US `1`) and
//! international prefixes (`00`, `011`) are handled.
//!
//! Parsing uses the `phonenumber` crate 0.3.10 (libphonenumber metadata 9.0.33). Its
//! validity check runs every metadata pattern through one mutex-guarded LRU cache of 100
//! regexes, which thrashes (≈40k numbers/s, serialized across threads). We therefore
//! check validity ourselves with the same metadata patterns compiled once
//! ([`is_valid_number`], same algorithm as the crate's `is_valid`), and parse 10- and
//! 11-digit NANP numbers written with only digits and separators without the crate
//! ([`parse_nanp_fast`]). Property tests check both against the crate.

use std::collections::HashMap;
use std::sync::{LazyLock, Once, OnceLock};

use phonenumber::country::Id;
use phonenumber::metadata::{Descriptor, Metadata, DATABASE};
use phonenumber::PhoneNumber;
use regex::{Regex, RegexBuilder};

use super::Cleaned;

/// Longest E.164 number in digits (ITU-T E.164 §6).
pub const E164_MAX_DIGITS: usize = 15;

fn anchored(pattern: &str) -> Option<Regex> {
    // The crate compiles the metadata with `ignore_whitespace` and accepts a match that
    // starts at 0 (`find(..).start() == 0`); `^(?:..)` is the same test.
    RegexBuilder::new(&format!("^(?:{pattern})"))
        .ignore_whitespace(true)
        .build()
        .ok()
}

struct Desc {
    re: Option<Regex>,
    lengths: Vec<u16>,
}

impl Desc {
    fn new(d: &Descriptor) -> Desc {
        Desc {
            re: anchored(d.national_number().as_str()),
            lengths: d.possible_length().to_vec(),
        }
    }

    fn is_match(&self, national: &str) -> bool {
        if !self.lengths.is_empty() && !self.lengths.contains(&(national.len() as u16)) {
            return false;
        }
        self.re.as_ref().is_some_and(|r| r.is_match(national))
    }
}

/// The compiled patterns of one region.
struct Region {
    general: Desc,
    /// The number types the crate's `number_type` tests, in its order.
    kinds: Vec<Desc>,
    leading_digits: Option<Regex>,
}

impl Region {
    fn new(meta: &Metadata) -> Region {
        let d = meta.descriptors();
        let kinds = [
            d.premium_rate(),
            d.toll_free(),
            d.shared_cost(),
            d.voip(),
            d.personal_number(),
            d.pager(),
            d.uan(),
            d.voicemail(),
            d.fixed_line(),
            d.mobile(),
        ]
        .into_iter()
        .flatten()
        .map(Desc::new)
        .collect();
        Region {
            general: Desc::new(d.general()),
            kinds,
            leading_digits: meta.leading_digits().and_then(|r| anchored(r.as_str())),
        }
    }

    fn is_valid(&self, national: &str) -> bool {
        self.general.is_match(national) && self.kinds.iter().any(|k| k.is_match(national))
    }
}

/// Cache key of a metadata entry: the region id, or `+code` for the non-geographic
/// entries, which all share the id `001`.
fn region_key(meta: &Metadata) -> String {
    if meta.id() == "001" {
        format!("+{}", meta.country_code())
    } else {
        meta.id().to_string()
    }
}

static REGIONS: LazyLock<HashMap<String, OnceLock<Region>>> = LazyLock::new(|| {
    // `Database::iter` yields one entry per id, so walk the calling codes instead to
    // see every non-geographic entry (country calling codes have 1-3 digits).
    (1..1000u16)
        .filter_map(|code| DATABASE.by_code(&code))
        .flatten()
        .map(|m| (region_key(m), OnceLock::new()))
        .collect()
});

fn compiled(meta: &Metadata) -> Option<&'static Region> {
    let cell = REGIONS.get(&region_key(meta))?;
    Some(cell.get_or_init(|| Region::new(meta)))
}

/// Whether `national` (digits, with leading zeros) is a valid number for country
/// calling code `code`: the crate's `is_valid` algorithm (region by leading digits,
/// then the general pattern and one number-type pattern must match).
pub fn is_valid_number(code: u16, national: &str) -> bool {
    let Some(regions) = DATABASE.region(&code) else {
        return false;
    };
    if regions.len() == 1 {
        let meta = if regions[0] == "001" {
            DATABASE.by_code(&code).and_then(|m| m.into_iter().next())
        } else {
            DATABASE.by_id(regions[0])
        };
        return meta
            .and_then(compiled)
            .is_some_and(|r| r.is_valid(national));
    }
    for id in regions {
        let Some(r) = DATABASE.by_id(id).and_then(compiled) else {
            continue;
        };
        match &r.leading_digits {
            Some(lead) => {
                if lead.is_match(national) {
                    return r.is_valid(national);
                }
            }
            None => {
                if r.is_valid(national) {
                    return true;
                }
            }
        }
    }
    false
}

/// Regions for which [`parse_nanp_fast`] is used (and tested against the crate).
fn is_nanp_fast_region(region: &str) -> bool {
    matches!(region, "US" | "CA")
}

/// Fast path for NANP numbers written with digits and the separators ` ()-./` only:
/// 10 digits starting 2-9, or 11 digits `1` + 2-9... Returns the 10-digit national
/// number, or `None` when the input needs the full parser.
pub fn parse_nanp_fast(raw: &str) -> Option<[u8; 10]> {
    let mut digits = [0u8; 11];
    let mut n = 0;
    for b in raw.bytes() {
        match b {
            b'0'..=b'9' => {
                if n == 11 {
                    return None;
                }
                digits[n] = b;
                n += 1;
            }
            b' ' | b'(' | b')' | b'-' | b'.' | b'/' => {}
            _ => return None,
        }
    }
    let national = match n {
        10 => &digits[..10],
        11 if digits[0] == b'1' => &digits[1..11],
        _ => return None,
    };
    if !(b'2'..=b'9').contains(&national[0]) {
        return None;
    }
    let mut out = [0u8; 10];
    out.copy_from_slice(national);
    Some(out)
}

static ENLARGE_CACHE: Once = Once::new();

/// Full parse with the crate: (country code, national number with leading zeros).
fn parse_with_crate(raw: &str, region: Option<Id>) -> Option<(u16, String)> {
    // The crate's own parsing also goes through its regex cache; give it room for
    // all patterns so it does not recompile them in a loop.
    ENLARGE_CACHE.call_once(|| {
        if let Ok(mut cache) = DATABASE.cache().lock() {
            cache.set_capacity(100_000);
        }
    });
    let number: PhoneNumber = phonenumber::parse(region, raw).ok()?;
    Some((number.code().value(), number.national().to_string()))
}

fn digits_of(s: &str) -> impl Iterator<Item = u8> + '_ {
    s.bytes().filter(u8::is_ascii_digit)
}

/// Standardize a phone number to E.164 for the default `region` (ISO alpha-2).
///
/// `Parsed` when the input already held exactly the E.164 digits (`+1 202-555-0143`),
/// `Repaired` when digits were added or removed (country code from the region, trunk
/// prefix, `00` prefix, extension), `Invalid` when the number is not valid.
pub fn normalize_phone(raw: &str, region: Option<&str>) -> Cleaned {
    let raw = raw.trim();
    if raw.is_empty() {
        return Cleaned::Invalid;
    }
    let region = region.map(str::trim).filter(|r| !r.is_empty());
    let parsed = match region {
        Some(r) if is_nanp_fast_region(r) => match parse_nanp_fast(raw) {
            Some(national) => {
                let national = String::from_utf8_lossy(&national).into_owned();
                Some((1u16, national))
            }
            None => parse_with_crate(raw, r.parse().ok()),
        },
        Some(r) => match r.parse::<Id>() {
            Ok(id) => parse_with_crate(raw, Some(id)),
            // An unknown region: only numbers with their own country code can parse.
            Err(_) => parse_with_crate(raw, None),
        },
        None => parse_with_crate(raw, None),
    };
    let Some((code, national)) = parsed else {
        return Cleaned::Invalid;
    };
    let e164 = format!("+{code}{national}");
    if e164.len() - 1 > E164_MAX_DIGITS || !is_valid_number(code, &national) {
        return Cleaned::Invalid;
    }
    let raw_starts_plus = raw.trim_start().starts_with('+');
    if raw_starts_plus && digits_of(raw).eq(digits_of(&e164)) {
        Cleaned::Parsed(e164)
    } else {
        Cleaned::Repaired(e164)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::util::Rng;
    use phonenumber::Mode;

    fn e164(raw: &str, region: Option<&str>) -> Option<String> {
        normalize_phone(raw, region).into_value()
    }

    #[test]
    fn check_values_valid_numbers() {
        // CHECK_VALUES.md §5: phonenumbers 9.0.43 and Rust phonenumber 0.3.10+9.0.33
        // agree on these valid rows (E.164 column, valid = True).
        let rows = [
            ("(650) 253-0000", Some("US"), "+16502530000"),
            ("650.253.0000", Some("US"), "+16502530000"),
            ("+1 202-555-0143", None, "+12025550143"),
            ("1-800-FLOWERS", Some("US"), "+18003569377"),
            ("(650) 253-0000 ext. 123", Some("US"), "+16502530000"),
            ("020 7946 0018", Some("GB"), "+442079460018"),
            ("+44 (0)20 7946 0018", None, "+442079460018"),
            ("07911 123456", Some("GB"), "+447911123456"),
            ("030 12345678", Some("DE"), "+493012345678"),
            ("+49 (0)30 12345678", None, "+493012345678"),
            ("0049 30 12345678", Some("DE"), "+493012345678"),
            ("0151 23456789", Some("DE"), "+4915123456789"),
            ("089 1234", Some("DE"), "+49891234"),
            ("01 23 45 67 89", Some("FR"), "+33123456789"),
            ("06 12 34 56 78", Some("FR"), "+33612345678"),
            ("0033 1 23 45 67 89", Some("FR"), "+33123456789"),
            ("912 345 678", Some("ES"), "+34912345678"),
            ("+34 612 34 56 78", None, "+34612345678"),
            ("0034 912345678", Some("ES"), "+34912345678"),
        ];
        for (raw, region, want) in rows {
            assert_eq!(e164(raw, region).as_deref(), Some(want), "{raw} {region:?}");
        }
    }

    #[test]
    fn check_values_invalid_numbers_become_missing() {
        // CHECK_VALUES.md §5: rows with valid = False or a parse error.
        let rows = [
            ("555-1234", Some("US")),
            ("(123) 456-7890", Some("US")),
            ("07700 900123", Some("GB")),
            ("+44 20 1234", Some("GB")),
            ("+33 6 12 34 56 78 90", None),
            ("12345678", Some("ES")),
            ("+1234567890123456", None),
            ("abc", Some("US")),
            ("+999 1234567", None),
            ("6502530000", None),
        ];
        for (raw, region) in rows {
            assert_eq!(
                normalize_phone(raw, region),
                Cleaned::Invalid,
                "{raw} {region:?}"
            );
        }
    }

    #[test]
    fn extensions_and_prefixes() {
        // Extension forms (libphonenumber extension patterns, from memory); 011 is the
        // NANP international prefix (ITU-T E.164 Annex / NANPA, common practice).
        assert_eq!(
            e164("(650) 253-0000 x123", Some("US")).as_deref(),
            Some("+16502530000")
        );
        assert_eq!(
            e164("650-253-0000 ext 9", Some("US")).as_deref(),
            Some("+16502530000")
        );
        assert_eq!(
            e164("011 49 30 12345678", Some("US")).as_deref(),
            Some("+493012345678")
        );
        assert_eq!(
            e164("1 650 253 0000", Some("US")).as_deref(),
            Some("+16502530000")
        );
        // Country other than the default: the number's own code wins.
        assert_eq!(
            e164("+49 30 12345678", Some("US")).as_deref(),
            Some("+493012345678")
        );
    }

    #[test]
    fn parsed_versus_repaired() {
        assert_eq!(
            normalize_phone("+1 202-555-0143", Some("US")),
            Cleaned::Parsed("+12025550143".into())
        );
        assert_eq!(
            normalize_phone("030 12345678", Some("DE")),
            Cleaned::Repaired("+493012345678".into())
        );
        assert_eq!(
            normalize_phone("+12025550143", None),
            Cleaned::Parsed("+12025550143".into())
        );
    }

    fn crate_e164(raw: &str, region: Option<Id>) -> Option<String> {
        let n = phonenumber::parse(region, raw).ok()?;
        n.is_valid()
            .then(|| n.format().mode(Mode::E164).to_string())
    }

    fn random_numbers(seed: u64, count: usize) -> Vec<(String, &'static str)> {
        let mut rng = Rng::new(seed);
        let regions = ["US", "CA", "GB", "DE", "FR", "ES", "IT", "NL", "CH", "AT"];
        let mut out = Vec::with_capacity(count);
        for _ in 0..count {
            let region = regions[rng.below(regions.len() as u64) as usize];
            let len = 6 + rng.below(7) as usize;
            let mut digits: String = (0..len)
                .map(|_| char::from(b'0' + rng.below(10) as u8))
                .collect();
            let s = match rng.below(6) {
                0 => digits,
                1 => format!("+{digits}"),
                2 => format!("0{digits}"),
                3 => {
                    digits.insert(3, ' ');
                    format!("({}", digits.replacen(' ', ") ", 1))
                }
                4 => format!("00{digits}"),
                _ => {
                    digits.insert(3, '-');
                    digits
                }
            };
            out.push((s, region));
        }
        out
    }

    #[test]
    fn own_validity_agrees_with_crate() {
        // Reference: the crate's `is_valid` (phonenumber 0.3.10+9.0.33) on random input.
        let mut checked = 0;
        let mut valid = 0;
        for (raw, region) in random_numbers(7, 4000) {
            let id: Id = region.parse().unwrap();
            if let Ok(n) = phonenumber::parse(Some(id), &raw) {
                let ours = is_valid_number(n.code().value(), &n.national().to_string());
                assert_eq!(ours, n.is_valid(), "{raw} {region}");
                checked += 1;
                valid += usize::from(ours);
            }
        }
        assert!(checked > 2000 && valid > 100, "{checked} {valid}");
    }

    #[test]
    fn normalize_agrees_with_crate() {
        // End to end, fast paths included, against the crate's parse + is_valid + E164.
        for (raw, region) in random_numbers(11, 3000) {
            let id: Id = region.parse().unwrap();
            assert_eq!(
                e164(&raw, Some(region)),
                crate_e164(&raw, Some(id)),
                "{raw} {region}"
            );
        }
    }

    #[test]
    fn nanp_fast_path_agrees_with_crate() {
        // 10/11-digit NANP inputs with separators: fast path vs the crate.
        let mut rng = Rng::new(3);
        let mut hits = 0;
        for i in 0..3000 {
            let d: String = (0..10)
                .map(|_| char::from(b'0' + rng.below(10) as u8))
                .collect();
            let raw = match i % 4 {
                0 => d.clone(),
                1 => format!("({}) {}-{}", &d[..3], &d[3..6], &d[6..]),
                2 => format!("1-{}-{}-{}", &d[..3], &d[3..6], &d[6..]),
                _ => format!("{}.{}.{}", &d[..3], &d[3..6], &d[6..]),
            };
            for region in ["US", "CA"] {
                let id: Id = region.parse().unwrap();
                let want = crate_e164(&raw, Some(id));
                if parse_nanp_fast(&raw).is_some() {
                    hits += 1;
                }
                assert_eq!(e164(&raw, Some(region)), want, "{raw} {region}");
            }
        }
        assert!(hits > 3000);
    }

    #[test]
    #[ignore = "timing; run with --release -- --ignored --nocapture"]
    fn phone_speed() {
        use rayon::prelude::*;
        let mut rng = Rng::new(5);
        let inputs: Vec<(String, &str)> = (0..400_000)
            .map(|i| {
                let area = 201 + rng.below(780);
                let ex = 200 + rng.below(800);
                let line = rng.below(10_000);
                match i % 4 {
                    0 => (format!("({area}) {ex}-{line:04}"), "US"),
                    1 => (format!("+1 {area}-{ex}-{line:04}"), "US"),
                    2 => (
                        format!("0{} {:07}", 30 + rng.below(60), rng.below(10_000_000)),
                        "DE",
                    ),
                    _ => (format!("07{:09}", rng.below(1_000_000_000)), "GB"),
                }
            })
            .collect();
        let t = std::time::Instant::now();
        let ok = inputs
            .iter()
            .filter(|(s, r)| e164(s, Some(r)).is_some())
            .count();
        let single = t.elapsed();
        let t = std::time::Instant::now();
        let ok2 = inputs
            .par_iter()
            .filter(|(s, r)| e164(s, Some(r)).is_some())
            .count();
        let par = t.elapsed();
        assert_eq!(ok, ok2);
        let n = inputs.len() as f64;
        println!(
            "phone: {} inputs, {ok} valid; 1 thread {:.0}/s; {} threads {:.0}/s",
            inputs.len(),
            n / single.as_secs_f64(),
            rayon::current_num_threads(),
            n / par.as_secs_f64()
        );
    }
}
