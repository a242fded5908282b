//! Invented telephone numbers and the ways people write them.
//!
//! In: a country (and for the US a state). Out: a [`Phone`] (area code and subscriber
//! digits) and its text in one of several national or international styles. Numbers
//! come from ranges reserved for fiction where such ranges exist and the reference
//! metadata accepts them: US landlines 555-0100..555-0199 with real area codes (US
//! mobiles use other lines of the 555 exchange), UK landlines in the Ofcom drama ranges
//! (020 7946 0xxx, 0113 496 0xxx, ...), French landlines in the ARCEP fiction blocks
//! (01 99 00 xx xx, ...). Other numbers are random, valid-looking numbers.

use super::places::{Country, STATES};
use crate::util::Rng;

/// A telephone number: national significant number split into area and subscriber.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Phone {
    /// Country of the number.
    pub country: Country,
    /// Area (or mobile prefix) digits, without trunk prefix.
    pub area: String,
    /// Subscriber digits.
    pub rest: String,
}

/// How a number is written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PhoneStyle {
    /// National, spaced the usual way: `(415) 555-0123`, `030 1234567`, `01 23 45 67 89`.
    National,
    /// National, digits only: `4155550123`, `0301234567`.
    NationalCompact,
    /// National with other separators: `415.555.0123`, `030/1234567`, `020-1234567`.
    NationalAlt,
    /// International, spaced: `+1 415 555 0123`, `+49 30 1234567`.
    International,
    /// International, digits only after the plus: `+4930 1234567` / `+14155550123`.
    InternationalCompact,
    /// International with the trunk zero in brackets: `+49 (0)30 1234567`.
    InternationalTrunk,
    /// International with the 00 prefix: `0049 30 1234567`.
    DoubleZero,
    /// International as dialled from North America: `011 49 30 1234567`.
    FromNorthAmerica,
}

impl PhoneStyle {
    /// The national styles.
    pub const NATIONAL: [PhoneStyle; 3] = [
        PhoneStyle::National,
        PhoneStyle::NationalCompact,
        PhoneStyle::NationalAlt,
    ];
    /// The international styles (without the North-American dialling prefix).
    pub const INTERNATIONAL: [PhoneStyle; 4] = [
        PhoneStyle::International,
        PhoneStyle::InternationalCompact,
        PhoneStyle::InternationalTrunk,
        PhoneStyle::DoubleZero,
    ];
}

/// UK drama ranges accepted as valid by the reference metadata: (area, subscriber prefix).
/// The last three subscriber digits are free. Source: Ofcom, "Telephone numbers for
/// drama purposes" (from memory); validity checked against `phonenumber` in the tests.
const GB_DRAMA: &[(&str, &str)] = &[
    ("20", "79460"),
    ("113", "4960"),
    ("114", "4960"),
    ("116", "4960"),
    ("117", "4960"),
    ("118", "4960"),
    ("121", "4960"),
    ("131", "4960"),
    ("141", "4960"),
    ("151", "4960"),
    ("161", "4960"),
    ("191", "4980"),
    ("28", "96496"),
    ("29", "20180"),
];

/// French fiction blocks (ARCEP, from memory): 0Z AB CD followed by four free digits.
const FR_FICTION: &[(&str, &str)] = &[
    ("1", "9900"),
    ("2", "6191"),
    ("3", "5301"),
    ("4", "6571"),
    ("5", "3649"),
];

fn digits(rng: &mut Rng, n: usize) -> String {
    (0..n)
        .map(|_| char::from(b'0' + rng.below(10) as u8))
        .collect()
}

/// First digit 2-9, then `n - 1` free digits (subscriber numbers do not start with 0/1).
fn subscriber(rng: &mut Rng, n: usize) -> String {
    let mut s = String::with_capacity(n);
    s.push(char::from(b'2' + rng.below(8) as u8));
    s.push_str(&digits(rng, n - 1));
    s
}

impl Phone {
    /// A random number in `country`; `state` picks US area codes; `mobile` asks for a
    /// mobile number where the country's fictional ranges allow one.
    pub fn random(rng: &mut Rng, country: Country, state: Option<usize>, mobile: bool) -> Phone {
        let (area, rest): (String, String) = match country {
            Country::Us => {
                let st = &STATES[state.unwrap_or_else(|| rng.below(STATES.len() as u64) as usize)];
                let area = rng.pick(st.area_codes).to_string();
                // Landlines in the block reserved for fiction (555-0100..0199); mobiles on
                // other 555 lines, so that large populations do not all share 100 numbers
                // per area code (555-1212, directory assistance, is left out).
                let line = if mobile {
                    loop {
                        let l = 200 + rng.below(9800);
                        if l != 1212 {
                            break l;
                        }
                    }
                } else {
                    100 + rng.below(100)
                };
                (area, format!("555{line:04}"))
            }
            Country::Gb => {
                if mobile {
                    // No valid fictional mobile range exists in the metadata (07700 900xxx
                    // is rejected): a random, valid-looking mobile number.
                    let pre = *rng.pick(&["74", "75", "77", "78", "79"]);
                    (format!("{pre}{}", digits(rng, 2)), digits(rng, 6))
                } else {
                    let (area, pre) = *rng.pick(GB_DRAMA);
                    (area.to_string(), format!("{pre}{}", digits(rng, 3)))
                }
            }
            Country::Fr => {
                if mobile {
                    if rng.chance(0.7) {
                        let second = *rng.pick(&["1", "2", "4", "5", "6", "7", "8"]);
                        ("6".to_string(), format!("{second}{}", digits(rng, 7)))
                    } else {
                        (
                            "7".to_string(),
                            format!("{}{}", 3 + rng.below(6), digits(rng, 7)),
                        )
                    }
                } else {
                    let (area, pre) = *rng.pick(FR_FICTION);
                    (area.to_string(), format!("{pre}{}", digits(rng, 4)))
                }
            }
            Country::Ie => {
                if mobile {
                    (
                        rng.pick(&["83", "85", "86", "87", "89"]).to_string(),
                        subscriber(rng, 7),
                    )
                } else {
                    (
                        rng.pick(&["1", "21", "91", "61", "51"]).to_string(),
                        subscriber(rng, 7),
                    )
                }
            }
            Country::De => {
                if mobile {
                    let pre = *rng.pick(&[
                        "151", "152", "157", "160", "162", "170", "171", "172", "175", "176",
                        "177", "178", "179",
                    ]);
                    let len = if pre.starts_with("15") { 8 } else { 7 };
                    (pre.to_string(), subscriber(rng, len))
                } else {
                    let area = *rng.pick(&[
                        "30", "40", "89", "69", "221", "211", "711", "351", "341", "511", "911",
                        "421", "231", "201", "228",
                    ]);
                    let len = if area.len() == 2 {
                        7 + rng.below(2) as usize
                    } else {
                        6 + rng.below(2) as usize
                    };
                    (area.to_string(), subscriber(rng, len))
                }
            }
            Country::At => {
                if mobile {
                    let pre = *rng.pick(&["664", "660", "650", "676", "699", "680", "681", "688"]);
                    (pre.to_string(), subscriber(rng, 7))
                } else {
                    let area = *rng.pick(&["316", "662", "512", "732", "463", "2742"]);
                    (
                        area.to_string(),
                        subscriber(rng, if area.len() == 4 { 5 } else { 6 }),
                    )
                }
            }
            Country::Ch => {
                let area = if mobile {
                    *rng.pick(&["76", "77", "78", "79"])
                } else {
                    *rng.pick(&["44", "43", "31", "61", "21", "22", "41", "71", "52"])
                };
                (area.to_string(), subscriber(rng, 7))
            }
            Country::Es => {
                // Nine digits without trunk prefix; the first three are the area or the
                // mobile range.
                let area = if mobile {
                    format!("6{}{}", 1 + rng.below(9), rng.below(10))
                } else {
                    rng.pick(&[
                        "912", "913", "914", "915", "917", "918", "932", "933", "934", "935",
                        "936", "954", "963", "944", "985", "976", "968", "952", "958", "983",
                        "981",
                    ])
                    .to_string()
                };
                (area, subscriber(rng, 6))
            }
            Country::Nl => {
                if mobile {
                    (
                        "6".to_string(),
                        format!("{}{}", 1 + rng.below(5), digits(rng, 7)),
                    )
                } else {
                    (
                        rng.pick(&["20", "10", "70", "30", "40", "50", "24", "26", "13"])
                            .to_string(),
                        subscriber(rng, 7),
                    )
                }
            }
        };
        Phone {
            country,
            area,
            rest,
        }
    }

    /// Country calling code.
    pub fn calling_code(&self) -> &'static str {
        match self.country {
            Country::Us => "1",
            Country::Gb => "44",
            Country::Ie => "353",
            Country::De => "49",
            Country::At => "43",
            Country::Ch => "41",
            Country::Fr => "33",
            Country::Es => "34",
            Country::Nl => "31",
        }
    }

    /// National trunk prefix ("0", or "" where the national form has none).
    fn trunk(&self) -> &'static str {
        match self.country {
            Country::Us | Country::Es => "",
            _ => "0",
        }
    }

    /// The national significant number.
    pub fn national_number(&self) -> String {
        format!("{}{}", self.area, self.rest)
    }

    /// E.164 form, `+` and digits (used to check the generator, not written to files).
    pub fn e164(&self) -> String {
        format!("+{}{}{}", self.calling_code(), self.area, self.rest)
    }

    /// Subscriber digits grouped the way the country usually writes them.
    fn grouped_rest(&self) -> String {
        let r = &self.rest;
        let groups: &[usize] = match self.country {
            Country::Us => &[3, 4],
            Country::Gb | Country::Ie => match r.len() {
                8 => &[4, 4],
                6 => &[6],
                _ => &[3, 4],
            },
            Country::Ch => &[3, 2, 2],
            Country::Fr => &[2, 2, 2, 2],
            Country::Nl => {
                if self.area == "6" {
                    &[8]
                } else {
                    &[3, 4]
                }
            }
            Country::Es => &[3, 3],
            Country::De | Country::At => &[r.len()],
        };
        let sep = if self.country == Country::Us {
            "-"
        } else {
            " "
        };
        let mut out = String::with_capacity(r.len() + 4);
        let mut pos = 0;
        for (i, &g) in groups.iter().enumerate() {
            if pos >= r.len() {
                break;
            }
            if i > 0 {
                out.push_str(sep);
            }
            let end = if i + 1 == groups.len() {
                r.len()
            } else {
                (pos + g).min(r.len())
            };
            out.push_str(&r[pos..end]);
            pos = end;
        }
        out
    }

    /// The number written in `style`.
    pub fn format(&self, style: PhoneStyle) -> String {
        let cc = self.calling_code();
        let trunk = self.trunk();
        let area = &self.area;
        let rest = &self.rest;
        let grouped = self.grouped_rest();
        match (self.country, style) {
            (Country::Us, PhoneStyle::National) => {
                format!("({area}) {}-{}", &rest[..3], &rest[3..])
            }
            (Country::Us, PhoneStyle::NationalAlt) => {
                format!("{area}.{}.{}", &rest[..3], &rest[3..])
            }
            (Country::Us, PhoneStyle::NationalCompact) => format!("{area}{rest}"),
            (Country::Us, PhoneStyle::InternationalTrunk) => {
                format!("1-{area}-{}-{}", &rest[..3], &rest[3..])
            }
            (Country::Fr, PhoneStyle::National) => format!("0{area} {grouped}"),
            (Country::Fr, PhoneStyle::NationalAlt) => {
                format!("0{area}.{}", grouped.replace(' ', "."))
            }
            (_, PhoneStyle::National) => format!("{trunk}{area} {grouped}"),
            (Country::De | Country::At, PhoneStyle::NationalAlt) => format!("{trunk}{area}/{rest}"),
            (_, PhoneStyle::NationalAlt) => format!("{trunk}{area}-{rest}"),
            (_, PhoneStyle::NationalCompact) => format!("{trunk}{area}{rest}"),
            (_, PhoneStyle::International) => format!("+{cc} {area} {grouped}"),
            (_, PhoneStyle::InternationalCompact) => format!("+{cc}{area}{rest}"),
            (Country::Es, PhoneStyle::InternationalTrunk) => format!("+{cc} {area}{rest}"),
            (_, PhoneStyle::InternationalTrunk) => format!("+{cc} ({trunk}){area} {rest}"),
            (_, PhoneStyle::DoubleZero) => format!("00{cc} {area} {grouped}"),
            (_, PhoneStyle::FromNorthAmerica) => format!("011 {cc} {area} {grouped}"),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use phonenumber::country::Id;

    fn id(c: Country) -> Id {
        match c {
            Country::Us => Id::US,
            Country::Gb => Id::GB,
            Country::Ie => Id::IE,
            Country::De => Id::DE,
            Country::At => Id::AT,
            Country::Ch => Id::CH,
            Country::Fr => Id::FR,
            Country::Es => Id::ES,
            Country::Nl => Id::NL,
        }
    }

    /// Parse `text` with default region `region`; E.164 text when valid.
    fn valid_e164(text: &str, region: Id) -> Option<String> {
        let n = phonenumber::parse(Some(region), text).ok()?;
        if !n.is_valid() {
            return None;
        }
        Some(n.format().mode(phonenumber::Mode::E164).to_string())
    }

    #[test]
    fn examples_are_written_as_expected() {
        let us = Phone {
            country: Country::Us,
            area: "415".into(),
            rest: "5550123".into(),
        };
        assert_eq!(us.format(PhoneStyle::National), "(415) 555-0123");
        assert_eq!(us.format(PhoneStyle::NationalAlt), "415.555.0123");
        assert_eq!(us.format(PhoneStyle::International), "+1 415 555-0123");
        let de = Phone {
            country: Country::De,
            area: "30".into(),
            rest: "1234567".into(),
        };
        assert_eq!(de.format(PhoneStyle::National), "030 1234567");
        assert_eq!(de.format(PhoneStyle::NationalAlt), "030/1234567");
        assert_eq!(de.format(PhoneStyle::International), "+49 30 1234567");
        assert_eq!(
            de.format(PhoneStyle::InternationalTrunk),
            "+49 (0)30 1234567"
        );
        assert_eq!(de.format(PhoneStyle::DoubleZero), "0049 30 1234567");
        let gb = Phone {
            country: Country::Gb,
            area: "20".into(),
            rest: "79460123".into(),
        };
        assert_eq!(gb.format(PhoneStyle::National), "020 7946 0123");
        let fr = Phone {
            country: Country::Fr,
            area: "1".into(),
            rest: "99001234".into(),
        };
        assert_eq!(fr.format(PhoneStyle::National), "01 99 00 12 34");
    }

    /// Every generated number, written in every style, parses to its own E.164 form and
    /// is valid for its country under the reference metadata (`phonenumber` 0.3.10,
    /// libphonenumber metadata 9.0.33). Requirement: at least 99 % valid.
    #[test]
    fn clean_numbers_are_valid_for_their_country() {
        let mut rng = Rng::new(2026);
        for c in Country::ALL {
            let mut total = 0u32;
            let mut good = 0u32;
            for i in 0..400 {
                let state = (c == Country::Us).then(|| i % STATES.len());
                let p = Phone::random(&mut rng, c, state, i % 2 == 0);
                let styles = [
                    PhoneStyle::National,
                    PhoneStyle::NationalCompact,
                    PhoneStyle::NationalAlt,
                    PhoneStyle::International,
                    PhoneStyle::InternationalCompact,
                    PhoneStyle::InternationalTrunk,
                    PhoneStyle::DoubleZero,
                ];
                for style in styles {
                    total += 1;
                    let text = p.format(style);
                    // "00" is the international prefix in Europe, not in North America.
                    let region = if c == Country::Us && style == PhoneStyle::DoubleZero {
                        Id::GB
                    } else {
                        id(c)
                    };
                    if valid_e164(&text, region).as_deref() == Some(p.e164().as_str()) {
                        good += 1;
                    } else if total - good < 5 {
                        eprintln!(
                            "{c:?} {style:?} {text:?} -> {:?}",
                            valid_e164(&text, region)
                        );
                    }
                }
                // Dialled from North America: parse with the US as default region.
                // `phonenumber` 0.3.10 strips the US national prefix "1" from the
                // national number after "011 cc" or "+cc" when the default region is
                // the US ("+44 141 496 0369" -> +44414960369, checked on this machine),
                // so numbers whose national part starts with 1 are left out here.
                let text = p.format(PhoneStyle::FromNorthAmerica);
                if c != Country::Us && !p.area.starts_with('1') {
                    total += 1;
                    if valid_e164(&text, Id::US).as_deref() == Some(p.e164().as_str()) {
                        good += 1;
                    } else if total - good < 5 {
                        eprintln!("{c:?} from US {text:?} -> {:?}", valid_e164(&text, Id::US));
                    }
                }
            }
            assert!(
                good as f64 >= 0.99 * total as f64,
                "{c:?}: {good}/{total} valid"
            );
        }
    }

    #[test]
    fn every_us_area_code_is_valid_with_the_fictional_exchange() {
        for st in STATES {
            for ac in st.area_codes {
                let text = format!("({ac}) 555-0142");
                assert!(valid_e164(&text, Id::US).is_some(), "{} {text}", st.code);
            }
        }
    }
}
