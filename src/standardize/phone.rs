//! Telephone numbers to E.164.
//!
//! In: a raw number and the default region (ISO 3166 alpha-2: the record's own country
//! when it has one, else the source's). Out: the E.164 string (`+` country code and
//! national significant number, at most 15 digits, ITU-T E.164) for valid numbers only;
//! anything else is invalid (docs/check-values.md §5). Extensions (`ext. 123`,
//! `x123`) are dropped from the value. [`normalize_phone_typed`] also gives the
//! [`PhoneType`] of a valid number (`mobile`, `fixed_line`, `fixed_line_or_mobile`,
//! `toll_free`, ...) from the metadata's number-type patterns, following
//! libphonenumber's `getNumberType`; [`normalize_phone_type`] reads the same values from
//! a source column. National trunk prefixes (`0`, `(0)`, US `1`) and
//! international prefixes (`00`, `011`) are handled.
//!
//! Parsing uses the `phonenumber` crate 0.3.10 (libphonenumber metadata 9.0.33). Its
//! validity check runs every metadata pattern through one mutex-guarded LRU cache of 100
//! regexes, which thrashes (≈40k numbers/s, serialized across threads). We therefore
//! check validity ourselves with the same metadata patterns compiled once, one regex
//! set per region so that one pass tests all of them ([`is_valid_number`], same
//! algorithm as the crate's `is_valid`), and parse common shapes without the crate:
//! 10- and 11-digit NANP numbers written with digits and separators
//! ([`parse_nanp_fast`]), valid `+` international numbers, also with parentheses and a
//! written trunk prefix `+44 (0)20 ...` ([`parse_international_fast`]), and valid
//! national numbers of any region whose trunk prefix is `0` or which has none
//! ([`parse_national_fast`]). Property tests check all of them against the crate.

use rustc_hash::FxHashMap;
use std::borrow::Cow;
use std::sync::{LazyLock, Once, OnceLock};

use phonenumber::country::Id;
use phonenumber::metadata::{Descriptor, Metadata, DATABASE};
use phonenumber::PhoneNumber;
use regex::{Regex, RegexBuilder, RegexSet, RegexSetBuilder, SetMatches};

use super::Cleaned;

/// Longest E.164 number in digits (ITU-T E.164 §6).
pub const E164_MAX_DIGITS: usize = 15;

/// Mark at the end of a standardized phone number that is possible but not valid by
/// the numbering plan's metadata (`+15814586944?`), or whose region could not be
/// decided (`0612345678?`, the digits as written).
pub const UNVERIFIED_MARK: char = '?';

/// The national significant number of a standardized phone value: the digits after
/// the country calling code (country codes are prefix-free, ITU-T E.164 §6.2.1), or,
/// for a number without a country code, its digits without leading zeros (the trunk
/// prefix `0` of most numbering plans). `None` when nothing is left.
pub fn national_number_of(value: &str) -> Option<String> {
    let v = value.strip_suffix(UNVERIFIED_MARK).unwrap_or(value);
    let national = match v.strip_prefix('+') {
        Some(digits) => {
            if !digits.bytes().all(|b| b.is_ascii_digit()) {
                return None;
            }
            let len = (1..=3.min(digits.len())).find(|&len| {
                digits[..len]
                    .parse::<u16>()
                    .ok()
                    .and_then(calling_code)
                    .is_some()
            })?;
            digits[len..].trim_start_matches('0')
        }
        None => {
            if !v.bytes().all(|b| b.is_ascii_digit()) {
                return None;
            }
            v.trim_start_matches('0')
        }
    };
    (national.len() >= 4).then(|| national.to_string())
}

/// A metadata pattern as a match that must start at 0: the crate accepts
/// `find(..).start() == 0`, and `^(?:..)` is the same test.
fn anchored_text(pattern: &str) -> String {
    format!("^(?:{pattern})")
}

/// Compile a metadata pattern (anchored) as the crate does, with `ignore_whitespace`.
///
/// The patterns only ever see ASCII digits here, so they are compiled without Unicode
/// classes first (`\d` = `[0-9]`: much smaller automata, compiled much faster); a
/// pattern that needs Unicode mode is compiled with it.
fn anchored(pattern: &str) -> Option<Regex> {
    let text = anchored_text(pattern);
    // A larger lazy-DFA cache: the big national-number patterns (US, GB) otherwise
    // refill the default cache over and over.
    let build = |unicode: bool| {
        RegexBuilder::new(&text)
            .ignore_whitespace(true)
            .unicode(unicode)
            .dfa_size_limit(16 << 20)
            .build()
    };
    build(false).or_else(|_| build(true)).ok()
}

/// One number-type pattern of a region: its possible lengths and its place in the
/// region's [`RegexSet`] (`None` when the pattern does not compile, so it never
/// matches, as in the crate).
struct Desc {
    index: Option<usize>,
    lengths: Vec<u16>,
}

impl Desc {
    /// Register `d`'s pattern in `patterns` (anchored form, duplicates shared).
    fn new(d: &Descriptor, patterns: &mut Vec<String>) -> Desc {
        let pattern = d.national_number().as_str();
        let index = anchored(pattern).map(|_| {
            let full = anchored_text(pattern);
            match patterns.iter().position(|p| *p == full) {
                Some(i) => i,
                None => {
                    patterns.push(full);
                    patterns.len() - 1
                }
            }
        });
        Desc {
            index,
            lengths: d.possible_length().to_vec(),
        }
    }

    /// Whether the pattern matched `national`, given the set's matches on it.
    fn is_match(&self, national: &str, matched: &SetMatches) -> bool {
        if !self.lengths.is_empty() && !self.lengths.contains(&(national.len() as u16)) {
            return false;
        }
        self.index.is_some_and(|i| matched.matched(i))
    }
}

/// The kind of line a number belongs to, from the per-region number-type patterns of
/// the libphonenumber metadata. Names are libphonenumber's `PhoneNumberType` values in
/// snake case.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum PhoneType {
    /// Fixed (landline) number.
    FixedLine,
    /// Mobile number.
    Mobile,
    /// Fixed-line and mobile numbers share the ranges (e.g. NANP), or the number
    /// matches both patterns.
    FixedLineOrMobile,
    /// Freephone.
    TollFree,
    /// Premium rate.
    PremiumRate,
    /// Shared cost.
    SharedCost,
    /// Voice over IP.
    Voip,
    /// Personal number (routed to a fixed line or a mobile).
    PersonalNumber,
    /// Pager.
    Pager,
    /// Universal access number (company number routed by the operator).
    Uan,
    /// Voicemail access.
    Voicemail,
}

impl PhoneType {
    /// Every type, in declaration order.
    pub const ALL: [PhoneType; 11] = [
        PhoneType::FixedLine,
        PhoneType::Mobile,
        PhoneType::FixedLineOrMobile,
        PhoneType::TollFree,
        PhoneType::PremiumRate,
        PhoneType::SharedCost,
        PhoneType::Voip,
        PhoneType::PersonalNumber,
        PhoneType::Pager,
        PhoneType::Uan,
        PhoneType::Voicemail,
    ];

    /// The standardized value (`mobile`, `fixed_line`, ...).
    pub fn name(self) -> &'static str {
        match self {
            PhoneType::FixedLine => "fixed_line",
            PhoneType::Mobile => "mobile",
            PhoneType::FixedLineOrMobile => "fixed_line_or_mobile",
            PhoneType::TollFree => "toll_free",
            PhoneType::PremiumRate => "premium_rate",
            PhoneType::SharedCost => "shared_cost",
            PhoneType::Voip => "voip",
            PhoneType::PersonalNumber => "personal_number",
            PhoneType::Pager => "pager",
            PhoneType::Uan => "uan",
            PhoneType::Voicemail => "voicemail",
        }
    }

    /// The type with standardized value `name`.
    pub fn from_name(name: &str) -> Option<PhoneType> {
        PhoneType::ALL.into_iter().find(|t| t.name() == name)
    }
}

/// Other spellings of phone types seen in source columns (common practice, no source).
const PHONE_TYPE_SYNONYMS: &[(&str, PhoneType)] = &[
    ("cell", PhoneType::Mobile),
    ("cellular", PhoneType::Mobile),
    ("mobile_phone", PhoneType::Mobile),
    ("landline", PhoneType::FixedLine),
    ("fixed", PhoneType::FixedLine),
    ("freephone", PhoneType::TollFree),
    ("premium", PhoneType::PremiumRate),
];

/// Standardize a phone-type value read from a source column: ASCII case and the
/// separators ` `, `-` and `_` are ignored, a few other spellings (`cell`, `landline`)
/// map to the standard names. `Parsed` when the value is a standard name as written,
/// `Repaired` when it needed folding or a synonym, `Invalid` otherwise.
pub fn normalize_phone_type(raw: &str) -> Cleaned {
    let raw = raw.trim();
    let folded: String = raw
        .split([' ', '-', '_'])
        .filter(|w| !w.is_empty())
        .collect::<Vec<_>>()
        .join("_")
        .to_ascii_lowercase();
    let found = PhoneType::from_name(&folded).or_else(|| {
        PHONE_TYPE_SYNONYMS
            .iter()
            .find(|(s, _)| *s == folded)
            .map(|(_, t)| *t)
    });
    match found {
        Some(t) if t.name() == raw => Cleaned::Parsed(t.name().to_string()),
        Some(t) => Cleaned::Repaired(t.name().to_string()),
        None => Cleaned::Invalid,
    }
}

/// The compiled patterns of one region.
struct Region {
    general: Desc,
    /// The number-type patterns in the order libphonenumber's `getNumberType` (and the
    /// crate's `number_type`) tests them: premium rate, toll free, shared cost, voip,
    /// personal number, pager, UAN, voicemail, fixed line, mobile.
    kinds: Vec<(PhoneType, Desc)>,
    /// All of the region's number patterns in one set: one pass over a number tells
    /// which of them match (instead of one regex search per pattern).
    set: RegexSet,
    /// The mobile pattern, tested again after a fixed-line match.
    mobile: Option<Desc>,
    /// Fixed-line and mobile patterns are the same text: a fixed-line match is
    /// `fixed_line_or_mobile` without testing again (libphonenumber's
    /// `sameMobileAndFixedLinePattern`).
    same_fixed_and_mobile: bool,
    leading_digits: Option<Regex>,
    /// The international (IDD) prefix pattern, anchored: `None` when the region has
    /// none, `Some(None)` when it does not compile (then any number may start with it).
    idd: Option<Option<Regex>>,
    /// The trunk-prefix pattern (`national_prefix_for_parsing`), anchored.
    trunk_pattern: Option<Regex>,
    /// Whether a transform rule rewrites what the trunk pattern matched.
    trunk_transform: bool,
}

impl Region {
    fn new(meta: &Metadata) -> Region {
        let d = meta.descriptors();
        let mut patterns = Vec::new();
        let kinds = [
            (PhoneType::PremiumRate, d.premium_rate()),
            (PhoneType::TollFree, d.toll_free()),
            (PhoneType::SharedCost, d.shared_cost()),
            (PhoneType::Voip, d.voip()),
            (PhoneType::PersonalNumber, d.personal_number()),
            (PhoneType::Pager, d.pager()),
            (PhoneType::Uan, d.uan()),
            (PhoneType::Voicemail, d.voicemail()),
            (PhoneType::FixedLine, d.fixed_line()),
            (PhoneType::Mobile, d.mobile()),
        ]
        .into_iter()
        .filter_map(|(t, desc)| Some((t, Desc::new(desc?, &mut patterns))))
        .collect();
        let general = Desc::new(d.general(), &mut patterns);
        let mobile = d.mobile().map(|m| Desc::new(m, &mut patterns));
        // Each pattern compiled on its own above; the set of them compiles too, with
        // the same options (a failure would make every number invalid: tested).
        let build = |unicode: bool| {
            RegexSetBuilder::new(&patterns)
                .ignore_whitespace(true)
                .unicode(unicode)
                .dfa_size_limit(16 << 20)
                .build()
        };
        let set = build(false)
            .or_else(|_| build(true))
            .unwrap_or_else(|_| RegexSet::empty());
        let same_fixed_and_mobile = match (d.fixed_line(), d.mobile()) {
            (Some(f), Some(m)) => f.national_number().as_str() == m.national_number().as_str(),
            _ => false,
        };
        Region {
            general,
            kinds,
            set,
            mobile,
            same_fixed_and_mobile,
            leading_digits: meta.leading_digits().and_then(|r| anchored(r.as_str())),
            idd: meta.international_prefix().map(|r| anchored(r.as_str())),
            trunk_pattern: meta
                .national_prefix_for_parsing()
                .and_then(|r| anchored(r.as_str())),
            trunk_transform: meta.national_prefix_transform_rule().is_some(),
        }
    }

    /// Whether `digits` may start with the region's international prefix (the crate
    /// then reads a country code after it).
    fn idd_may_match(&self, digits: &str) -> bool {
        match &self.idd {
            None => false,
            Some(None) => true,
            Some(Some(re)) => re.is_match(digits),
        }
    }

    /// Whether the crate's parser could strip or rewrite a trunk prefix of `digits`
    /// other than exactly one leading `0` (see `helper::national_number` in the crate).
    fn trunk_other_than_zero(&self, digits: &str) -> bool {
        match &self.trunk_pattern {
            None => false,
            Some(re) => self.trunk_transform || re.find(digits).is_none_or(|m| m.end() != 1),
        }
    }

    /// The number type, `None` when the number is not valid here: the general pattern
    /// and then the first matching type pattern; a fixed-line match that also matches
    /// the mobile pattern is `fixed_line_or_mobile` (libphonenumber `getNumberType`).
    fn number_type(&self, national: &str) -> Option<PhoneType> {
        let matched = self.set.matches(national);
        if !self.general.is_match(national, &matched) {
            return None;
        }
        let (kind, _) = self
            .kinds
            .iter()
            .find(|(_, d)| d.is_match(national, &matched))?;
        if *kind == PhoneType::FixedLine
            && (self.same_fixed_and_mobile
                || self
                    .mobile
                    .as_ref()
                    .is_some_and(|m| m.is_match(national, &matched)))
        {
            return Some(PhoneType::FixedLineOrMobile);
        }
        Some(*kind)
    }
}

/// Cache key of a metadata entry: its address. The entries live in the crate's static
/// database (behind `Arc`s that are never replaced), so the address is stable, and
/// unlike the id it also tells apart the non-geographic entries, which all have id
/// `001`.
fn region_key(meta: &Metadata) -> usize {
    meta as *const Metadata as usize
}

static REGIONS: LazyLock<FxHashMap<usize, OnceLock<Region>>> = LazyLock::new(|| {
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

/// The metadata of one country calling code, looked up once (the database's own
/// lookups build a new `Vec` on every call).
struct CallingCode {
    /// All entries of the code, the main region first (`Database::by_code`).
    entries: Vec<&'static Metadata>,
    /// The entries in `Database::region` order, the order the crate tries them in
    /// when it picks a number's region; for non-geographic codes (`001`) the code's
    /// first entry.
    by_region: Vec<&'static Metadata>,
    /// The trunk prefixes (`national_prefix`) of the entries.
    trunk_prefixes: Vec<&'static str>,
    /// The entries' trunk-prefix patterns, compiled on first use.
    trunk_patterns: OnceLock<TrunkPatterns>,
}

/// The trunk-prefix patterns of a calling code's entries.
enum TrunkPatterns {
    /// No entry has one.
    None,
    /// All of them in one anchored alternation.
    Any(Regex),
    /// One of them does not compile: anything may be stripped.
    Broken,
}

impl CallingCode {
    /// Whether the crate could strip a trunk prefix from `national` (written without
    /// one) under any entry of the code.
    fn may_strip(&self, national: &str) -> bool {
        if self.trunk_prefixes.iter().any(|p| national.starts_with(p)) {
            return true;
        }
        let patterns = self.trunk_patterns.get_or_init(|| {
            let patterns: Vec<&str> = self
                .entries
                .iter()
                .filter_map(|m| m.national_prefix_for_parsing())
                .map(|r| r.as_str())
                .collect();
            if patterns.is_empty() {
                return TrunkPatterns::None;
            }
            // Each one must compile on its own, as `Region` compiles them.
            if patterns.iter().any(|p| anchored(p).is_none()) {
                return TrunkPatterns::Broken;
            }
            let alternation = patterns
                .iter()
                .map(|p| format!("(?:{p})"))
                .collect::<Vec<_>>()
                .join("|");
            anchored(&alternation).map_or(TrunkPatterns::Broken, TrunkPatterns::Any)
        });
        match patterns {
            TrunkPatterns::None => false,
            TrunkPatterns::Any(re) => re.is_match(national),
            TrunkPatterns::Broken => true,
        }
    }
}

static CALLING_CODES: LazyLock<Vec<Option<CallingCode>>> = LazyLock::new(|| {
    // Country calling codes have 1-3 digits (ITU-T E.164).
    (0..1000u16)
        .map(|code| {
            let entries = DATABASE.by_code(&code)?;
            let by_region = DATABASE
                .region(&code)?
                .into_iter()
                .filter_map(|id| {
                    if id == "001" {
                        entries.first().copied()
                    } else {
                        DATABASE.by_id(id)
                    }
                })
                .collect();
            let trunk_prefixes = entries.iter().filter_map(|m| m.national_prefix()).collect();
            Some(CallingCode {
                entries,
                by_region,
                trunk_prefixes,
                trunk_patterns: OnceLock::new(),
            })
        })
        .collect()
});

fn calling_code(code: u16) -> Option<&'static CallingCode> {
    CALLING_CODES.get(usize::from(code))?.as_ref()
}

/// Whether `national` (digits, with leading zeros) is a valid number for country
/// calling code `code`: the crate's `is_valid` algorithm (region by leading digits,
/// then the general pattern and one number-type pattern must match).
pub fn is_valid_number(code: u16, national: &str) -> bool {
    number_type(code, national).is_some()
}

/// The type of `national` (digits, with leading zeros) under country calling code
/// `code`, `None` when the number is not valid. The region is chosen as for validity
/// (by leading digits where the metadata has them); the type then follows
/// libphonenumber's `getNumberType` with the same compiled patterns.
pub fn number_type(code: u16, national: &str) -> Option<PhoneType> {
    region_of(code, national)?.1
}

/// The region (metadata entry) that `national` belongs to under calling code `code`,
/// chosen as the crate's `validator::source_for` does: the only region of the code, or
/// the first whose leading-digits pattern matches, or (regions without one) the first
/// where the number is valid. With it the number's type there (`None`: not valid).
fn region_of(code: u16, national: &str) -> Option<(&'static Metadata, Option<PhoneType>)> {
    let regions = &calling_code(code)?.by_region;
    if let [meta] = regions[..] {
        return Some((meta, compiled(meta)?.number_type(national)));
    }
    for &meta in regions {
        let Some(r) = compiled(meta) else {
            continue;
        };
        match &r.leading_digits {
            Some(lead) => {
                if lead.is_match(national) {
                    return Some((meta, r.number_type(national)));
                }
            }
            None => {
                if let Some(t) = r.number_type(national) {
                    return Some((meta, Some(t)));
                }
            }
        }
    }
    None
}

/// The type of a number in E.164 form (`+` and digits, as [`normalize_phone`] writes
/// it); `None` when it is not a valid number.
pub fn phone_type_of_e164(e164: &str) -> Option<PhoneType> {
    let digits = e164.strip_prefix('+')?;
    if !digits.bytes().all(|b| b.is_ascii_digit()) || digits.len() > E164_MAX_DIGITS {
        return None;
    }
    // Country calling codes are prefix-free (ITU-T E.164): the first known prefix.
    (1..=3.min(digits.len())).find_map(|len| {
        let code = digits[..len].parse::<u16>().ok()?;
        calling_code(code)?;
        Some(number_type(code, &digits[len..]))
    })?
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

/// What a fast path decided.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Fast {
    /// A valid number: country calling code, national number and its type.
    Valid(u16, String, PhoneType),
    /// A shape the fast path handles, and not a valid number.
    Invalid,
    /// Not a shape the fast path handles: use the full parser.
    Unhandled,
}

fn decide(code: u16, national: &str) -> Fast {
    match number_type(code, national) {
        Some(kind) => Fast::Valid(code, national.to_string(), kind),
        None => Fast::Invalid,
    }
}

/// Fast path for international numbers written as `+` and digits with the separators
/// ` -./()` only (only spaces among the first three digits, no parenthesis before the
/// first), e.g. stored E.164 values, `+1 (202) 555-0143` or `+44 (0)20 7946 0023`: the
/// country code is the shortest known 1-3 digit prefix, as in the crate, and the rest
/// is the national number. A written trunk prefix `0` (`(0)`) is dropped where the
/// crate drops it (see `drop_written_trunk`). Unhandled when the crate could strip
/// anything else (the trunk-prefix pattern of a region of the code matches the
/// national number).
pub fn parse_international_fast(raw: &str) -> Fast {
    let Some(rest) = raw.strip_prefix('+') else {
        return Fast::Unhandled;
    };
    let mut digits = String::with_capacity(16);
    for b in rest.bytes() {
        match b {
            b'0'..=b'9' => digits.push(b as char),
            b' ' => {}
            // The crate reads `+4-3...` as country code 4; let it decide such cases.
            b'-' | b'.' | b'/' if digits.len() >= 3 => {}
            b'(' | b')' if !digits.is_empty() => {}
            _ => return Fast::Unhandled,
        }
    }
    // One more digit allowed for a written trunk prefix.
    if !(8..=E164_MAX_DIGITS + 1).contains(&digits.len()) || digits.starts_with('0') {
        return Fast::Unhandled;
    }
    for len in 1..=3 {
        let Ok(code) = digits[..len].parse::<u16>() else {
            return Fast::Unhandled;
        };
        if let Some(cc) = calling_code(code) {
            let national = &digits[len..];
            if national.starts_with('0') {
                return drop_written_trunk(code, national);
            }
            if digits.len() > E164_MAX_DIGITS {
                return Fast::Unhandled;
            }
            if cc.may_strip(national) {
                return Fast::Unhandled;
            }
            return decide(code, national);
        }
    }
    Fast::Unhandled
}

/// `+CC (0)...`: a national number written after the country code with its trunk
/// prefix `0`. The crate picks the region from the number without leading zeros, then
/// strips one `0` with the region's trunk-prefix pattern (or its trunk prefix). Valid
/// when the region's trunk prefix is exactly `0`, its pattern strips just that `0`
/// (no transform rule) and the rest is valid there; anything else is left to the crate.
fn drop_written_trunk(code: u16, national: &str) -> Fast {
    let Some(rest) = national.strip_prefix('0') else {
        return Fast::Unhandled;
    };
    if rest.starts_with('0') || rest.len() + code_digits(code) > E164_MAX_DIGITS {
        return Fast::Unhandled;
    }
    let Some((meta, Some(kind))) = region_of(code, rest) else {
        return Fast::Unhandled;
    };
    if meta.national_prefix() != Some("0") || meta.national_prefix_transform_rule().is_some() {
        return Fast::Unhandled;
    }
    if meta.national_prefix_for_parsing().is_some()
        && compiled(meta).is_none_or(|r| r.trunk_other_than_zero(national))
    {
        return Fast::Unhandled;
    }
    Fast::Valid(code, rest.to_string(), kind)
}

/// Number of decimal digits of a country calling code.
fn code_digits(code: u16) -> usize {
    match code {
        0..=9 => 1,
        10..=99 => 2,
        _ => 3,
    }
}

/// Fast path for national numbers: digits and the separators ` ()-./` only, not
/// starting with the region's international prefix.
///
/// Where the trunk prefix is `0`: one leading `0` (two would be the international
/// prefix), which is dropped, as the crate does; unhandled when the region's
/// trunk-prefix pattern would strip anything else (GB's `0|180020` strips just the `0`
/// from such input). Where the region has no trunk prefix at all (ES, DK, NO, PT, IT,
/// ...): the digits are the national number, unless they start with `00` (the
/// international prefix) or with the region's country code (which the crate may take
/// for a country code written without `+`).
pub fn parse_national_fast(raw: &str, region: &str) -> Fast {
    let Some(meta) = DATABASE.by_id(region) else {
        return Fast::Unhandled;
    };
    let Some(compiled_region) = compiled(meta) else {
        return Fast::Unhandled;
    };
    let mut digits = String::with_capacity(16);
    for b in raw.bytes() {
        match b {
            b'0'..=b'9' => digits.push(b as char),
            b' ' | b'(' | b')' | b'-' | b'.' | b'/' => {}
            _ => return Fast::Unhandled,
        }
    }
    if compiled_region.idd_may_match(&digits) {
        return Fast::Unhandled;
    }
    match (meta.national_prefix(), meta.national_prefix_for_parsing()) {
        (Some("0"), _) => {}
        (None, None) => {
            let code = meta.country_code();
            if digits.starts_with("00")
                || digits.starts_with(&code.to_string())
                || digits.len() > E164_MAX_DIGITS
            {
                return Fast::Unhandled;
            }
            return decide(code, &digits);
        }
        _ => return Fast::Unhandled,
    }
    if meta.national_prefix_for_parsing().is_some()
        && compiled_region.trunk_other_than_zero(&digits)
    {
        return Fast::Unhandled;
    }
    match digits.strip_prefix('0') {
        Some(national) if !national.starts_with('0') => decide(meta.country_code(), national),
        _ => Fast::Unhandled,
    }
}

static ENLARGE_CACHE: Once = Once::new();

/// Full parse with the crate: (country code, national number with leading zeros).
fn parse_with_crate(raw: &str, region: Option<Id>) -> Option<(u16, String, Option<PhoneType>)> {
    // The crate's own parsing also goes through its regex cache; give it room for
    // all patterns so it does not recompile them in a loop.
    ENLARGE_CACHE.call_once(|| {
        if let Ok(mut cache) = DATABASE.cache().lock() {
            cache.set_capacity(100_000);
        }
    });
    let number: PhoneNumber = phonenumber::parse(region, raw).ok()?;
    Some((number.code().value(), number.national().to_string(), None))
}

/// European regions whose international (IDD) prefix is `00` (ITU-T E.164 Annex,
/// common practice, no source for the list).
const IDD_00: &[&str] = &[
    "DE", "AT", "CH", "LI", "FR", "BE", "LU", "MC", "NL", "GB", "IE", "ES", "PT", "IT", "DK", "SE",
    "NO", "PL", "CZ", "SK", "HU", "SI", "HR", "GR", "RO", "BG", "EE", "LV", "LT",
];

/// A number written with an international prefix (`+`, `00` in the regions of
/// [`IDD_00`], `011` in US/CA), in `+` form. `None` for national numbers.
///
/// Such numbers are parsed WITHOUT the default region: phonenumber 0.3.10 applies the
/// default region's trunk prefix to the foreign national number (with default region
/// US, `+43 1 5450547` loses its leading `1` and becomes invalid), which libphonenumber
/// does not do.
fn international_form<'a>(raw: &'a str, region: Option<&str>) -> Option<Cow<'a, str>> {
    if raw.starts_with('+') {
        return Some(Cow::Borrowed(raw));
    }
    let region = region?;
    let rest = if IDD_00.contains(&region) {
        raw.strip_prefix("00")?
    } else if is_nanp_fast_region(region) {
        raw.strip_prefix("011")?
    } else {
        return None;
    };
    // "00" followed by another 0 is no calling code.
    (!rest.trim_start().starts_with(['0', '+'])).then(|| Cow::Owned(format!("+{rest}")))
}

fn region_id(region: Option<&str>) -> Option<Id> {
    region.and_then(|r| r.parse().ok())
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
    normalize_phone_typed(raw, region).0
}

/// [`normalize_phone`] and, for valid numbers, the number's [`PhoneType`], found with
/// the same pattern matches as the validity check (no extra pass).
pub fn normalize_phone_typed(raw: &str, region: Option<&str>) -> (Cleaned, Option<PhoneType>) {
    const INVALID: (Cleaned, Option<PhoneType>) = (Cleaned::Invalid, None);
    let raw = raw.trim();
    if raw.is_empty() {
        return INVALID;
    }
    let region = region.map(str::trim).filter(|r| !r.is_empty());
    let international = international_form(raw, region);
    let parsed = match region {
        _ if international.is_some() => {
            let plus = international.as_deref().unwrap_or(raw);
            match parse_international_fast(plus) {
                Fast::Valid(code, national, kind) => Some((code, national, Some(kind))),
                Fast::Invalid => None,
                Fast::Unhandled => parse_with_crate(plus, None),
            }
        }
        Some(r) if is_nanp_fast_region(r) => match parse_nanp_fast(raw) {
            Some(national) => {
                let national = String::from_utf8_lossy(&national).into_owned();
                Some((1u16, national, None))
            }
            None => parse_with_crate(raw, r.parse().ok()),
        },
        Some(r) => match parse_national_fast(raw, r) {
            Fast::Valid(code, national, kind) => Some((code, national, Some(kind))),
            Fast::Invalid => None,
            Fast::Unhandled => parse_with_crate(raw, region_id(region)),
        },
        // No region: only numbers with their own country code can parse.
        None => parse_with_crate(raw, None),
    };
    let Some((code, national, kind)) = parsed else {
        return INVALID;
    };
    let e164 = format!("+{code}{national}");
    if e164.len() - 1 > E164_MAX_DIGITS {
        return INVALID;
    }
    // The fast paths found the type with the validity check; the others look now.
    let Some(kind) = kind.or_else(|| number_type(code, &national)) else {
        return INVALID;
    };
    let raw_starts_plus = raw.trim_start().starts_with('+');
    if raw_starts_plus && digits_of(raw).eq(digits_of(&e164)) {
        (Cleaned::Parsed(e164), Some(kind))
    } else {
        (Cleaned::Repaired(e164), Some(kind))
    }
}

/// How the region of a phone number written without its country code was decided, in
/// the order the evidence is tried (the summary counts each).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum RegionMethod {
    /// The number carries its country code (`+49 ...`, `0049 ...`, `011 49 ...`).
    Written,
    /// The record's own country column.
    Country,
    /// The country-code top-level domain of the record's e-mail address (`.de`, `.fr`,
    /// `.co.uk`).
    EmailDomain,
    /// A postcode whose shape belongs to one country only (UK, Canada, the
    /// Netherlands, ...).
    Postcode,
    /// The source's declared `country`.
    Source,
    /// One of the countries the spec's other sources declare.
    SpecCountries,
    /// No region could be decided: the digits are kept as written, unverified.
    Undecided,
}

impl RegionMethod {
    /// Every method, in the order they are tried.
    pub const ALL: [RegionMethod; 7] = [
        RegionMethod::Written,
        RegionMethod::Country,
        RegionMethod::EmailDomain,
        RegionMethod::Postcode,
        RegionMethod::Source,
        RegionMethod::SpecCountries,
        RegionMethod::Undecided,
    ];

    /// The name shown in the summary.
    pub fn name(self) -> &'static str {
        match self {
            RegionMethod::Written => "written country code",
            RegionMethod::Country => "country column",
            RegionMethod::EmailDomain => "e-mail domain",
            RegionMethod::Postcode => "postcode shape",
            RegionMethod::Source => "source country",
            RegionMethod::SpecCountries => "spec countries",
            RegionMethod::Undecided => "undecided",
        }
    }

    /// Position in [`RegionMethod::ALL`].
    pub fn index(self) -> usize {
        self as usize
    }
}

/// A standardized phone number and what was decided about it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PhoneOutcome {
    /// E.164 for valid numbers; E.164 with [`UNVERIFIED_MARK`] for numbers that are
    /// possible (a length the numbering plan allows) but not valid; the digits as
    /// written with the mark when no region could be decided; invalid otherwise.
    pub value: Cleaned,
    /// The number type of a valid number.
    pub kind: Option<PhoneType>,
    /// True for a number valid by the numbering plan.
    pub verified: bool,
    /// How the region was decided (for kept numbers).
    pub method: Option<RegionMethod>,
}

/// Whether `national` has a length that numbers under country calling code `code` can
/// have (libphonenumber's `isPossibleNumber` on the general descriptor's possible
/// lengths; lengths only possible for local dialling are not enough here).
pub fn is_possible_number(code: u16, national: &str) -> bool {
    let Some(cc) = calling_code(code) else {
        return false;
    };
    let len = national.len() as u16;
    cc.entries.iter().any(|m| {
        let general = m.descriptors().general().possible_length();
        if general.is_empty() {
            [m.descriptors().fixed_line(), m.descriptors().mobile()]
                .into_iter()
                .flatten()
                .any(|d| d.possible_length().contains(&len))
        } else {
            general.contains(&len)
        }
    })
}

/// Country code and national number of a number in `+` form (separators and a written
/// trunk prefix `(0)` allowed), without checking validity: the country code is the
/// known 1-3 digit prefix (country codes are prefix-free, ITU-T E.164 §6.2.1); a
/// leading `0` of the national number is a written trunk prefix where the code's main
/// region uses `0`.
fn split_international(plus: &str) -> Option<(u16, String)> {
    let rest = plus.trim().strip_prefix('+')?;
    if rest
        .bytes()
        .any(|b| !(b.is_ascii_digit() || b" -./()".contains(&b)))
    {
        return None;
    }
    let digits: String = rest.chars().filter(char::is_ascii_digit).collect();
    let len = (1..=3.min(digits.len())).find(|&len| {
        digits[..len]
            .parse::<u16>()
            .ok()
            .and_then(calling_code)
            .is_some()
    })?;
    let code: u16 = digits[..len].parse().ok()?;
    let mut national = &digits[len..];
    let trunk_zero = calling_code(code)
        .and_then(|c| c.entries.first())
        .is_some_and(|m| m.national_prefix() == Some("0"));
    if trunk_zero {
        national = national.strip_prefix('0').unwrap_or(national);
    }
    Some((code, national.to_string()))
}

/// Country code and national number of a nationally written number under `region`:
/// the region's trunk prefix (`0`, NANP `1` before ten digits) removed. `None` when
/// the input holds anything but digits and separators.
fn split_national(raw: &str, region: &str) -> Option<(u16, String)> {
    let meta = DATABASE.by_id(region)?;
    if raw
        .bytes()
        .any(|b| !(b.is_ascii_digit() || b" -./()".contains(&b)))
    {
        return None;
    }
    let digits: String = raw.chars().filter(char::is_ascii_digit).collect();
    let national = match meta.national_prefix() {
        Some("1") => {
            if digits.len() == 11 {
                digits.strip_prefix('1').unwrap_or(&digits)
            } else {
                &digits
            }
        }
        Some(p) => digits.strip_prefix(p).unwrap_or(&digits),
        None => &digits,
    };
    Some((meta.country_code(), national.to_string()))
}

/// A number given as country code and national number in its standardized form: E.164
/// with its type when valid, else E.164 with [`UNVERIFIED_MARK`] when possible.
fn decided(code: u16, national: &str) -> Option<(String, Option<PhoneType>)> {
    let e164 = format!("+{code}{national}");
    if e164.len() - 1 > E164_MAX_DIGITS {
        return None;
    }
    if let Some(kind) = number_type(code, national) {
        return Some((e164, Some(kind)));
    }
    is_possible_number(code, national).then(|| (format!("{e164}{UNVERIFIED_MARK}"), None))
}

/// Standardize a phone number with the regions the record's evidence suggests, best
/// first (`candidates`: region and how it was found).
///
/// The number is read under each candidate region in turn; the first under which it is
/// valid wins (a number with its own country code ignores the candidates). When it is
/// valid under none, the first candidate under which it is *possible* (a length the
/// region's numbering plan allows) gives an unverified number (`+CC...` and
/// [`UNVERIFIED_MARK`]). Without any candidate region, a number of 7 to 15 digits is
/// kept as its digits with the mark (`Undecided`); comparison can still use it.
/// Anything else is invalid. Reading the standardized value again gives the same value.
pub fn standardize_phone(raw: &str, candidates: &[(&str, RegionMethod)]) -> PhoneOutcome {
    const INVALID: PhoneOutcome = PhoneOutcome {
        value: Cleaned::Invalid,
        kind: None,
        verified: false,
        method: None,
    };
    let raw = raw.trim();
    let raw = raw.strip_suffix(UNVERIFIED_MARK).unwrap_or(raw).trim_end();
    if raw.is_empty() {
        return INVALID;
    }
    let valid = |cleaned: Cleaned, kind: Option<PhoneType>, method| PhoneOutcome {
        value: cleaned,
        kind,
        verified: true,
        method: Some(method),
    };
    let kept = |(value, kind): (String, Option<PhoneType>), method| PhoneOutcome {
        value: Cleaned::Repaired(value),
        verified: kind.is_some(),
        kind,
        method: Some(method),
    };
    if raw.starts_with('+') {
        let (cleaned, kind) = normalize_phone_typed(raw, None);
        if kind.is_some() {
            return valid(cleaned, kind, RegionMethod::Written);
        }
        return match split_international(raw).and_then(|(c, n)| decided(c, &n)) {
            Some(v) => kept(v, RegionMethod::Written),
            None => INVALID,
        };
    }
    for &(region, method) in candidates {
        let (cleaned, kind) = normalize_phone_typed(raw, Some(region));
        if kind.is_some() {
            let method = if international_form(raw, Some(region)).is_some() {
                RegionMethod::Written
            } else {
                method
            };
            return valid(cleaned, kind, method);
        }
    }
    for &(region, method) in candidates {
        let found = match international_form(raw, Some(region)) {
            Some(plus) => split_international(&plus)
                .and_then(|(c, n)| decided(c, &n))
                .map(|v| (v, RegionMethod::Written)),
            None => split_national(raw, region)
                .and_then(|(c, n)| decided(c, &n))
                .map(|v| (v, method)),
        };
        if let Some((v, m)) = found {
            return kept(v, m);
        }
    }
    let has_other = raw
        .bytes()
        .any(|b| !(b.is_ascii_digit() || b" -./()".contains(&b)));
    let digits: String = raw.chars().filter(char::is_ascii_digit).collect();
    if candidates.is_empty() && !has_other && (7..=E164_MAX_DIGITS).contains(&digits.len()) {
        return kept(
            (format!("{digits}{UNVERIFIED_MARK}"), None),
            RegionMethod::Undecided,
        );
    }
    INVALID
}

/// Generic top-level domains that are country codes in name only, widely used by
/// people anywhere (common practice, no source).
const VANITY_TLDS: &[&str] = &[
    "io", "co", "me", "tv", "ai", "ly", "fm", "to", "cc", "ws", "nu", "gg", "am", "im", "so", "vc",
    "sh",
];

/// Second-level labels under which a country code top-level domain is used by that
/// country (`yahoo.com.co`, `bbc.co.uk`).
const COUNTRY_SLDS: &[&str] = &["com", "co", "net", "org", "gov", "edu", "ac", "gob", "nic"];

/// The region of an e-mail address's country-code top-level domain (`.de` -> DE, `.uk`
/// -> GB, IANA root zone), `None` for generic domains (`.com`, `.org`) and for
/// country codes widely used as generic names (`.io`, `.co`, `.me`, `.tv`, ...).
pub fn region_of_email(email: &str) -> Option<&'static str> {
    let (_, domain) = email.rsplit_once('@')?;
    let mut labels = domain.rsplit('.');
    let tld = labels.next()?.to_ascii_lowercase();
    let sld = labels.next().map(str::to_ascii_lowercase);
    if tld.len() != 2 || !tld.bytes().all(|b| b.is_ascii_lowercase()) {
        return None;
    }
    let national_sld = sld.as_deref().is_some_and(|l| COUNTRY_SLDS.contains(&l));
    if VANITY_TLDS.contains(&tld.as_str()) && !national_sld {
        return None;
    }
    let region = if tld == "uk" {
        "GB".to_string()
    } else {
        tld.to_ascii_uppercase()
    };
    DATABASE.by_id(&region).map(|m| m.id())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::util::Rng;
    use phonenumber::Mode;

    fn e164(raw: &str, region: Option<&str>) -> Option<String> {
        normalize_phone(raw, region).into_value()
    }

    /// Each `(raw, default region, expected E.164)` row standardizes to its expected value.
    fn assert_e164(rows: &[(&str, &str, &str)]) {
        for &(raw, region, want) in rows {
            assert_eq!(
                e164(raw, Some(region)).as_deref(),
                Some(want),
                "{raw} (default region {region})"
            );
        }
    }

    #[test]
    fn check_values_valid_numbers() {
        // docs/check-values.md §5: phonenumbers 9.0.43 and Rust phonenumber 0.3.10+9.0.33
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
        // docs/check-values.md §5: rows with valid = False or a parse error.
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

    fn typed(raw: &str, region: Option<&str>) -> Option<PhoneType> {
        normalize_phone_typed(raw, region).1
    }

    #[test]
    fn check_values_phone_types() {
        // docs/check-values.md §5, "type" column (phonenumbers 9.0.43 `number_type`).
        use PhoneType::*;
        let rows = [
            ("(650) 253-0000", Some("US"), FixedLineOrMobile),
            ("+1 202-555-0143", None, FixedLineOrMobile),
            ("1-800-FLOWERS", Some("US"), TollFree),
            ("020 7946 0018", Some("GB"), FixedLine),
            ("+44 (0)20 7946 0018", None, FixedLine),
            ("07911 123456", Some("GB"), Mobile),
            ("030 12345678", Some("DE"), FixedLine),
            ("0151 23456789", Some("DE"), Mobile),
            ("089 1234", Some("DE"), FixedLine),
            ("01 23 45 67 89", Some("FR"), FixedLine),
            ("06 12 34 56 78", Some("FR"), Mobile),
            ("912 345 678", Some("ES"), FixedLine),
            ("+34 612 34 56 78", None, Mobile),
        ];
        for (raw, region, want) in rows {
            assert_eq!(typed(raw, region), Some(want), "{raw} {region:?}");
            let e = e164(raw, region).unwrap();
            assert_eq!(phone_type_of_e164(&e), Some(want), "{e}");
        }
        // Rows with valid = False have type UNKNOWN: no type.
        for (raw, region) in [("555-1234", Some("US")), ("07700 900123", Some("GB"))] {
            assert_eq!(typed(raw, region), None, "{raw}");
        }
    }

    #[test]
    fn example_numbers_have_their_type() {
        // libphonenumber's example number per type (phonenumber 0.3.10+9.0.33
        // metadata, `Descriptor::example`). NANP fixed-line and mobile ranges are one
        // pattern, so US examples are fixed_line_or_mobile.
        use PhoneType::*;
        let rows = [
            ("US", FixedLineOrMobile, FixedLineOrMobile),
            ("GB", FixedLine, Mobile),
            ("DE", FixedLine, Mobile),
            ("FR", FixedLine, Mobile),
            ("ES", FixedLine, Mobile),
        ];
        for (region, fixed, mobile) in rows {
            let meta = DATABASE.by_id(region).unwrap();
            let code = meta.country_code();
            let d = meta.descriptors();
            let example = |x: Option<&Descriptor>| x.and_then(|x| x.example()).unwrap().to_string();
            assert_eq!(
                number_type(code, &example(d.fixed_line())),
                Some(fixed),
                "{region}"
            );
            assert_eq!(
                number_type(code, &example(d.mobile())),
                Some(mobile),
                "{region}"
            );
            assert_eq!(
                number_type(code, &example(d.toll_free())),
                Some(TollFree),
                "{region}"
            );
            if let Some(voip) = d.voip().and_then(|x| x.example()) {
                assert_eq!(number_type(code, voip), Some(Voip), "{region}");
            }
            let national = &example(d.mobile());
            assert_eq!(
                phone_type_of_e164(&format!("+{code}{national}")),
                Some(mobile),
                "{region}"
            );
        }
    }

    fn from_crate(t: phonenumber::Type) -> Option<PhoneType> {
        use phonenumber::Type as T;
        Some(match t {
            T::FixedLine => PhoneType::FixedLine,
            T::Mobile => PhoneType::Mobile,
            T::FixedLineOrMobile => PhoneType::FixedLineOrMobile,
            T::TollFree => PhoneType::TollFree,
            T::PremiumRate => PhoneType::PremiumRate,
            T::SharedCost => PhoneType::SharedCost,
            T::Voip => PhoneType::Voip,
            T::PersonalNumber => PhoneType::PersonalNumber,
            T::Pager => PhoneType::Pager,
            T::Uan => PhoneType::Uan,
            T::Voicemail => PhoneType::Voicemail,
            _ => return None,
        })
    }

    #[test]
    fn number_type_agrees_with_crate() {
        // Reference: the crate's `number_type` (phonenumber 0.3.10+9.0.33) on every
        // example number of every calling code, and on random valid numbers.
        let mut checked = 0;
        let mut types = std::collections::HashSet::new();
        for code in 1..1000u16 {
            for meta in DATABASE.by_code(&code).unwrap_or_default() {
                let d = meta.descriptors();
                let all = [
                    d.fixed_line(),
                    d.mobile(),
                    d.toll_free(),
                    d.premium_rate(),
                    d.shared_cost(),
                    d.personal_number(),
                    d.voip(),
                    d.pager(),
                    d.uan(),
                    d.voicemail(),
                ];
                for example in all.into_iter().flatten().filter_map(|x| x.example()) {
                    let Ok(n) = phonenumber::parse(None, format!("+{code}{example}")) else {
                        continue;
                    };
                    // Validity is compared in `own_validity_agrees_with_crate`. The
                    // crate's `number_type` drops leading zeros of the national number
                    // (Italian fixed lines come out unknown); those are checked below.
                    let (c, national) = (n.code().value(), n.national().to_string());
                    if !n.is_valid() || national.starts_with('0') {
                        continue;
                    }
                    let want = from_crate(n.number_type(&DATABASE));
                    let got = number_type(c, &national);
                    assert_eq!(got, want, "+{c} {national}");
                    types.extend(got);
                    checked += 1;
                }
            }
        }
        // Italian numbers keep their leading 0 (libphonenumber `italian_leading_zero`):
        // the IT example fixed-line and mobile numbers of the metadata.
        let it = DATABASE.by_id("IT").unwrap().descriptors();
        let fixed = it.fixed_line().and_then(|d| d.example()).unwrap();
        assert!(fixed.starts_with('0'), "{fixed}");
        assert_eq!(number_type(39, fixed), Some(PhoneType::FixedLine));
        let mobile = it.mobile().and_then(|d| d.example()).unwrap();
        assert_eq!(number_type(39, mobile), Some(PhoneType::Mobile));
        for (raw, region) in random_numbers(29, 4000) {
            let id: Id = region.parse().unwrap();
            if let Ok(n) = phonenumber::parse(Some(id), &raw) {
                let national = n.national().to_string();
                if national.starts_with('0') {
                    continue;
                }
                let want = if n.is_valid() {
                    from_crate(n.number_type(&DATABASE))
                } else {
                    None
                };
                assert_eq!(
                    number_type(n.code().value(), &national),
                    want,
                    "{raw} {region}"
                );
                checked += 1;
            }
        }
        assert!(checked > 3000, "{checked}");
        assert!(types.len() >= 8, "{types:?}");
    }

    #[test]
    fn phone_type_column_values() {
        // Standard names are libphonenumber's PhoneNumberType names in snake case;
        // the other spellings are common practice, no source.
        for t in PhoneType::ALL {
            assert_eq!(
                normalize_phone_type(t.name()),
                Cleaned::Parsed(t.name().into())
            );
            assert_eq!(PhoneType::from_name(t.name()), Some(t));
        }
        let repaired = [
            ("Mobile", "mobile"),
            (" FIXED LINE ", "fixed_line"),
            ("fixed-line-or-mobile", "fixed_line_or_mobile"),
            ("Cell", "mobile"),
            ("landline", "fixed_line"),
            ("Toll Free", "toll_free"),
        ];
        for (raw, want) in repaired {
            assert_eq!(
                normalize_phone_type(raw),
                Cleaned::Repaired(want.into()),
                "{raw}"
            );
        }
        for raw in ["", "work", "home", "mobile2", "fixed line 2"] {
            assert_eq!(normalize_phone_type(raw), Cleaned::Invalid, "{raw}");
        }
        assert_eq!(phone_type_of_e164("+"), None);
        assert_eq!(phone_type_of_e164("4930123"), None);
        assert_eq!(phone_type_of_e164("+49 30 12345678"), None);
        assert_eq!(phone_type_of_e164("+999123456789"), None);
    }

    proptest::proptest! {
        #[test]
        fn valid_numbers_and_only_they_have_a_type(raw in "\\+?[0-9 ()-]{0,18}", r in 0usize..6) {
            let region = ["US", "GB", "DE", "FR", "ES", ""][r];
            let (cleaned, kind) = normalize_phone_typed(&raw, Some(region));
            let value = cleaned.into_value();
            proptest::prop_assert_eq!(value.is_some(), kind.is_some());
            if let Some(v) = value {
                proptest::prop_assert_eq!(phone_type_of_e164(&v), kind);
            }
        }
    }

    #[test]
    fn foreign_numbers_with_a_country_code_keep_it_whatever_the_default_region() {
        // phonenumber 0.3.10 with default region US strips the `1` of `+44 141 ...`;
        // expected values are the numbers as written (ITU-T E.164: + country code + national).
        assert_e164(&[
            ("+44 141 496 0369", "US", "+441414960369"),
            ("+49 151 12345678", "US", "+4915112345678"),
            ("011 44 141 496 0369", "US", "+441414960369"),
            ("0044 141 496 0369", "DE", "+441414960369"),
            ("+1 202-555-0143", "GB", "+12025550143"),
        ]);
    }

    #[test]
    fn extensions_and_prefixes() {
        // Extension forms (libphonenumber extension patterns, from memory); 011 is the
        // NANP international prefix (ITU-T E.164 Annex / NANPA, common practice).
        assert_e164(&[
            ("(650) 253-0000 x123", "US", "+16502530000"),
            ("650-253-0000 ext 9", "US", "+16502530000"),
            ("011 49 30 12345678", "US", "+493012345678"),
            ("1 650 253 0000", "US", "+16502530000"),
            // Country other than the default: the number's own code wins.
            ("+49 30 12345678", "US", "+493012345678"),
        ]);
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

    /// The crate's result (parse, `is_valid`, E.164 format), with our two documented
    /// deviations: at most 15 digits, and international numbers parsed without the
    /// default region.
    fn crate_e164(raw: &str, region: Option<Id>) -> Option<String> {
        let raw = raw.trim();
        let (raw, region) = match region.and_then(|r| international_form(raw, Some(r.as_ref()))) {
            Some(plus) => (plus.into_owned(), None),
            None if raw.starts_with('+') => (raw.to_string(), None),
            None => (raw.to_string(), region),
        };
        let n = phonenumber::parse(region, &raw).ok()?;
        let e = n.format().mode(Mode::E164).to_string();
        (n.is_valid() && e.len() <= E164_MAX_DIGITS + 1).then_some(e)
    }

    #[test]
    fn international_numbers_ignore_the_default_region() {
        // Vienna numbers start with 1 and Italian fixed lines with 0 (from memory);
        // libphonenumber keeps them whatever the default region, phonenumber 0.3.10
        // strips them as the default region's trunk prefix.
        assert_e164(&[
            ("+43 1 545054776", "US", "+431545054776"),
            ("011 43 1 545054776", "US", "+431545054776"),
            ("0043 1 545054776", "DE", "+431545054776"),
            ("+39 05 9113886", "DE", "+39059113886"),
        ]);
        let n = phonenumber::parse(Some(Id::US), "+431545054776").unwrap();
        assert!(
            !n.is_valid(),
            "the crate's behaviour changed; revisit international_form"
        );
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
            let s = match rng.below(8) {
                0 => digits,
                1 => format!("+{digits}"),
                2 => format!("0{digits}"),
                6 => format!("0{}/{}", &digits[..2], &digits[2..]),
                7 => format!("(0{}) {}-{}", &digits[..3], &digits[3..5], &digits[5..]),
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
    fn national_fast_path_agrees_with_crate() {
        // Near-valid national numbers: the metadata's example numbers (phonenumber
        // 0.3.10+9.0.33) with random last digits, written with trunk prefix and
        // separators, and after the region's international prefix, in every region
        // (European ones, the most common in our data, more often).
        let mut rng = Rng::new(23);
        let mut hits = 0;
        let mut regions: Vec<&str> = (1..1000u16)
            .filter_map(|code| DATABASE.region(&code))
            .flatten()
            .filter(|id| *id != "001" && !is_nanp_fast_region(id))
            .collect();
        regions.sort_unstable();
        regions.dedup();
        assert!(regions.len() > 200, "{}", regions.len());
        for region in regions {
            let meta = DATABASE.by_id(region).unwrap();
            let d = meta.descriptors();
            let examples = [d.fixed_line(), d.mobile()]
                .into_iter()
                .flatten()
                .filter_map(|x| x.example())
                .filter(|x| x.len() >= 5);
            let rounds = if IDD_00.contains(&region) { 70 } else { 14 };
            for example in examples {
                for i in 0..rounds {
                    let national = near(example, &mut rng);
                    // Written with the trunk prefix, and without it (regions that
                    // have none, e.g. ES, write their numbers so).
                    let raw = match i % 7 {
                        0 => format!("0{national}"),
                        1 => format!("0{} {}", &national[..2], &national[2..]),
                        2 => format!("(0{}) {}", &national[..3], &national[3..]),
                        3 => format!("0{}/{}", &national[..2], &national[2..]),
                        4 => national.clone(),
                        5 => format!("{} {}-{}", &national[..2], &national[2..4], &national[4..]),
                        _ => {
                            // The international prefix and a country code: never
                            // national, whatever the fast path would make of it.
                            let idd = meta.preferred_international_prefix().unwrap_or("00");
                            let idd: String = idd.chars().filter(char::is_ascii_digit).collect();
                            format!("{idd} 44 {national}")
                        }
                    };
                    if matches!(parse_national_fast(&raw, region), Fast::Valid(..)) {
                        hits += 1;
                    }
                    let id: Id = region.parse().unwrap();
                    assert_eq!(
                        e164(&raw, Some(region)),
                        crate_e164(&raw, Some(id)),
                        "{raw} {region}"
                    );
                }
            }
        }
        assert!(hits > 1500, "{hits}");
    }

    /// `example` with its last three digits random: a near-valid number.
    fn near(example: &str, rng: &mut Rng) -> String {
        let keep = example.len().saturating_sub(3);
        let tail: String = (keep..example.len())
            .map(|_| char::from(b'0' + rng.below(10) as u8))
            .collect();
        format!("{}{tail}", &example[..keep])
    }

    #[test]
    fn written_trunk_and_parentheses_agree_with_crate() {
        // `+CC (0)...`, `+CC (xx) ...` and friends for the example numbers of every
        // metadata entry (phonenumber 0.3.10+9.0.33) with random last digits: the
        // international fast path against the crate (no default region, and DE).
        let mut rng = Rng::new(29);
        let mut hits = 0;
        let mut trunk_hits = 0;
        for code in 1..1000u16 {
            for meta in DATABASE.by_code(&code).unwrap_or_default() {
                let d = meta.descriptors();
                let examples = [d.fixed_line(), d.mobile(), d.toll_free()]
                    .into_iter()
                    .flatten()
                    .filter_map(|x| x.example());
                for example in examples {
                    if example.len() < 5 {
                        continue;
                    }
                    for i in 0..8 {
                        let n = near(example, &mut rng);
                        let raw = match i % 4 {
                            0 => format!("+{code} (0){n}"),
                            1 => format!("+{code}(0){} {}", &n[..2], &n[2..]),
                            2 => format!("+{code} ({}) {}-{}", &n[..2], &n[2..4], &n[4..]),
                            _ => format!("+{code} (0) {}.{}", &n[..3], &n[3..]),
                        };
                        if let Fast::Valid(..) = parse_international_fast(&raw) {
                            hits += 1;
                            trunk_hits += usize::from(raw.contains("(0)"));
                        }
                        assert_eq!(e164(&raw, None), crate_e164(&raw, None), "{raw}");
                        assert_eq!(
                            e164(&raw, Some("DE")),
                            crate_e164(&raw, Some(Id::DE)),
                            "{raw} DE"
                        );
                    }
                }
            }
        }
        assert!(hits > 1000 && trunk_hits > 500, "{hits} {trunk_hits}");
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
    fn international_fast_path_agrees_with_crate() {
        // "+" and digits for every calling code 1..999, vs the crate (no default region).
        let mut rng = Rng::new(19);
        let mut hits = 0;
        for i in 0..6000 {
            let code = 1 + rng.below(999);
            let len = 6 + rng.below(8) as usize;
            let national: String = (0..len)
                .map(|_| char::from(b'0' + rng.below(10) as u8))
                .collect();
            let raw = if i % 2 == 0 {
                format!("+{code}{national}")
            } else {
                format!("+{code} {} {}", &national[..2], &national[2..])
            };
            if matches!(parse_international_fast(&raw), Fast::Valid(..)) {
                hits += 1;
            }
            assert_eq!(e164(&raw, None), crate_e164(&raw, None), "{raw}");
            assert_eq!(
                e164(&raw, Some("DE")),
                crate_e164(&raw, Some(Id::DE)),
                "{raw}"
            );
        }
        assert!(hits > 100, "{hits}");
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
                match i % 7 {
                    0 => (format!("({area}) {ex}-{line:04}"), "US"),
                    1 => (format!("+1 {area}-{ex}-{line:04}"), "US"),
                    2 => (
                        format!("0{} {:07}", 30 + rng.below(60), rng.below(10_000_000)),
                        "DE",
                    ),
                    3 => (format!("07{:09}", rng.below(1_000_000_000)), "GB"),
                    4 => (format!("+44 (0)20 7946 {line:04}"), "GB"),
                    5 => (format!("+49 (0)30 {:08}", rng.below(100_000_000)), "DE"),
                    _ => (
                        format!("9{:02} {:06}", rng.below(100), rng.below(1_000_000)),
                        "ES",
                    ),
                }
            })
            .collect();
        let t = std::time::Instant::now();
        let cpu = crate::standardize::thread_cpu_seconds();
        let ok = inputs
            .iter()
            .filter(|(s, r)| e164(s, Some(r)).is_some())
            .count();
        let single = t.elapsed();
        let cpu = crate::standardize::thread_cpu_seconds()
            .zip(cpu)
            .map(|(b, a)| b - a);
        let t = std::time::Instant::now();
        let ok2 = inputs
            .par_iter()
            .filter(|(s, r)| e164(s, Some(r)).is_some())
            .count();
        let par = t.elapsed();
        assert_eq!(ok, ok2);
        let n = inputs.len() as f64;
        println!(
            "phone: {} inputs, {ok} valid; 1 thread {:.0}/s wall, {:.0}/s CPU; \
             {} threads {:.0}/s wall",
            inputs.len(),
            n / single.as_secs_f64(),
            cpu.map_or(f64::NAN, |c| n / c),
            rayon::current_num_threads(),
            n / par.as_secs_f64()
        );
    }

    #[test]
    fn possible_but_invalid_numbers_are_kept_unverified() {
        use RegionMethod as M;
        let std = |raw: &str, regions: &[(&str, M)]| {
            let o = standardize_phone(raw, regions);
            (o.value.into_value(), o.verified, o.method)
        };
        // CHECK_VALUES.md §5 (Python phonenumbers 9.0.43): possible (IS_POSSIBLE) but
        // not valid; E.164 as phonenumbers formats it.
        assert_eq!(
            std("07700 900123", &[("GB", M::Source)]),
            (Some("+447700900123?".into()), false, Some(M::Source))
        );
        assert_eq!(
            std("(123) 456-7890", &[("US", M::Country)]),
            (Some("+11234567890?".into()), false, Some(M::Country))
        );
        // Valid numbers as before, with the method that decided the region.
        assert_eq!(
            std("020 7946 0018", &[("GB", M::Country)]),
            (Some("+442079460018".into()), true, Some(M::Country))
        );
        assert_eq!(
            std("+44 (0)20 7946 0018", &[("US", M::Source)]),
            (Some("+442079460018".into()), true, Some(M::Written))
        );
        assert_eq!(
            std("0049 30 12345678", &[("DE", M::Source)]),
            (Some("+493012345678".into()), true, Some(M::Written))
        );
        // Not possible (phonenumbers: TOO_SHORT, TOO_LONG, IS_POSSIBLE_LOCAL_ONLY, which
        // is not enough to compare): invalid.
        for (raw, region) in [
            ("12345678", "ES"),
            ("+33 6 12 34 56 78 90", "FR"),
            ("+1234567890123456", "US"),
            ("555-1234", "US"),
            ("+44 20 1234", "GB"),
        ] {
            assert_eq!(std(raw, &[(region, M::Source)]).0, None, "{raw}");
        }
        // No region at all: the digits, unverified.
        assert_eq!(
            std("06 12 34 56 78", &[]),
            (Some("0612345678?".into()), false, Some(M::Undecided))
        );
        assert_eq!(std("12 34", &[]).0, None);
    }

    #[test]
    fn region_from_the_first_candidate_where_the_number_is_valid() {
        use RegionMethod as M;
        // CHECK_VALUES.md §5: "06 12 34 56 78" is a valid FR mobile; under US it is not
        // a valid number.
        let o = standardize_phone(
            "06 12 34 56 78",
            &[("US", M::Source), ("FR", M::SpecCountries)],
        );
        assert_eq!(o.value.into_value().as_deref(), Some("+33612345678"));
        assert_eq!((o.verified, o.method), (true, Some(M::SpecCountries)));
        assert_eq!(o.kind, Some(PhoneType::Mobile));
        let o = standardize_phone(
            "06 12 34 56 78",
            &[("FR", M::EmailDomain), ("US", M::Source)],
        );
        assert_eq!(o.method, Some(M::EmailDomain));
    }

    #[test]
    fn standardized_numbers_read_back_the_same() {
        use RegionMethod as M;
        let regions = [("DE", M::Source), ("FR", M::SpecCountries)];
        for raw in [
            "0151 23456789",
            "07700 900123",
            "+44 7700 900123",
            "0612345678",
            "x",
        ] {
            let once = standardize_phone(raw, &regions).value.into_value();
            if let Some(v) = &once {
                let twice = standardize_phone(v, &regions).value.into_value();
                assert_eq!(twice.as_ref(), Some(v), "{raw}");
            }
        }
    }

    #[test]
    fn email_country_domains_and_postcode_shapes() {
        // IANA root zone: .de Germany, .uk the United Kingdom (ISO code GB), .fr France.
        assert_eq!(region_of_email("a@b.de"), Some("DE"));
        assert_eq!(region_of_email("a@yahoo.co.uk"), Some("GB"));
        assert_eq!(region_of_email("a@orange.fr"), Some("FR"));
        assert_eq!(region_of_email("a@gmail.com"), None);
        // Country codes widely used as generic names (common practice, no source).
        assert_eq!(region_of_email("a@startup.io"), None);
        assert_eq!(region_of_email("a@x.co"), None);
        assert_eq!(region_of_email("a@yahoo.com.co"), Some("CO"));
        assert_eq!(region_of_email("not an address"), None);
        // Possible lengths, libphonenumber metadata (phonenumbers 9.0.43 agrees:
        // "07700 900123" GB is IS_POSSIBLE with 10 national digits).
        assert!(is_possible_number(44, "7700900123"));
        assert!(!is_possible_number(44, "201234"));
        assert!(!is_possible_number(999, "1234567"));
    }
}
