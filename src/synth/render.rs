//! Writing one customer as one source record, with that source's conventions and noise.
//!
//! In: a [`Person`] with clean values, the source, which address and e-mail are current
//! for this record, and the noise settings. Out: the record's field values (without the
//! source id, which is given when the rows are put in file order), the set of noise
//! kinds applied, and counters of how often each kind was tried and applied.

use super::names::{self, Culture};
use super::noise::{self, Date};
use super::people::Person;
use super::phone::PhoneStyle;
use super::places::Country;
use super::{NoiseConfig, NoiseKind, NoiseStats, Source};
use crate::util::Rng;

/// Invented products of the invented retailer, for support-ticket subjects.
const PRODUCTS: &[&str] = &[
    "Fernlight solar lantern",
    "Brambleback camp chair",
    "Thistledown duvet",
    "Harborview deck chair",
    "Kestrel 2-person tent",
    "Juniper planter set",
    "Copperline kettle",
    "Willowmere throw",
    "Lark hammock",
    "Quarrystone fire pit",
    "Heron hose reel",
    "Maplewood rocking chair",
    "Driftline picnic blanket",
    "Owlwatch bird feeder",
];

/// Subject templates; `{}` is replaced by a product.
const SUBJECTS: &[&str] = &[
    "Return request: {}",
    "Damaged on arrival: {}",
    "Where is my order?",
    "Wrong colour delivered ({})",
    "Missing parts for {}",
    "Warranty question about {}",
    "Please change my delivery address",
    "Refund not received",
    "Copy of invoice needed",
    "Assembly instructions for {}",
    "Cancel my order",
    "Loyalty points missing",
    "Discount code not accepted",
];

/// One rendered record.
pub struct Rendered {
    /// Field values in header order, without the id column.
    pub fields: Vec<String>,
    /// Noise kinds applied (bit `k` for [`NoiseKind`] with index `k`).
    pub flags: u32,
}

/// Per-record choices made by the caller.
pub struct RecordPlan {
    /// Source of the record.
    pub source: Source,
    /// Use the address after the move.
    pub new_address: bool,
    /// Use the changed e-mail address.
    pub new_email: bool,
    /// A second record of the same customer in the same source.
    pub duplicate: bool,
    /// Record time in seconds since 1970 (0 for the CRM, which has no timestamps).
    pub time: i64,
}

/// Rolls noise dice and counts them.
struct Dice<'a> {
    rng: &'a mut Rng,
    stats: &'a mut NoiseStats,
    flags: u32,
}

impl Dice<'_> {
    /// Try noise `kind` with probability `p`; record the attempt and the outcome.
    fn roll(&mut self, kind: NoiseKind, p: f64) -> bool {
        self.stats.tried[kind as usize] += 1;
        let hit = self.rng.chance(p);
        if hit {
            self.hit(kind);
        }
        hit
    }

    /// Record that `kind` was applied (for kinds decided elsewhere).
    fn hit(&mut self, kind: NoiseKind) {
        self.stats.applied[kind as usize] += 1;
        self.flags |= 1 << kind as u32;
    }

    /// Try the missing-value noise on a field.
    fn missing(&mut self, p: f64, value: String) -> String {
        if value.is_empty() || !self.roll(NoiseKind::Missing, p) {
            value
        } else {
            String::new()
        }
    }

    /// Try a typo on a field.
    fn typo(&mut self, kind: NoiseKind, p: f64, value: String) -> String {
        if value.chars().filter(|c| c.is_alphabetic()).count() < 2 {
            return value;
        }
        if self.roll(kind, p) {
            noise::typo(self.rng, &value).unwrap_or(value)
        } else {
            value
        }
    }
}

/// How a fold of diacritics is done.
#[derive(Clone, Copy)]
enum Fold {
    German,
    Strip,
}

fn fold(f: Option<Fold>, s: String) -> String {
    match f {
        None => s,
        Some(Fold::German) => noise::transliterate_german(&s),
        Some(Fold::Strip) => noise::strip_diacritics(&s),
    }
}

/// The source's default country (whose numbers it writes without a country code).
fn home_country(source: Source) -> Country {
    match source {
        Source::Crm => Country::Us,
        Source::Webshop => Country::De,
        Source::Support => Country::Gb,
    }
}

/// Diacritics are lost more often in the legacy CRM (ASCII only) than in the web shop.
fn diacritics_factor(source: Source) -> f64 {
    match source {
        Source::Crm => 3.0,
        Source::Webshop => 0.5,
        Source::Support => 1.0,
    }
}

fn timestamp(t: i64, seconds: bool) -> String {
    let day = t.div_euclid(86_400);
    let s = t.rem_euclid(86_400);
    let d = Date::from_days(day);
    if seconds {
        format!(
            "{} {:02}:{:02}:{:02}",
            d.ymd(),
            s / 3600,
            s / 60 % 60,
            s % 60
        )
    } else {
        format!("{} {:02}:{:02}", d.ymd(), s / 3600, s / 60 % 60)
    }
}

/// Render `person` as one record of `plan.source`.
pub fn render(
    rng: &mut Rng,
    cfg: &NoiseConfig,
    stats: &mut NoiseStats,
    person: &Person,
    plan: &RecordPlan,
) -> Rendered {
    let source = plan.source;
    let mut dice = Dice {
        rng,
        stats,
        flags: 0,
    };
    dice.stats.records += 1;
    if plan.duplicate {
        dice.hit(NoiseKind::Duplicate);
    }
    let address = match (&person.new_address, plan.new_address) {
        (Some(a), true) => {
            dice.hit(NoiseKind::Moved);
            a
        }
        _ => &person.address,
    };
    let email = match (&person.new_email, plan.new_email) {
        (Some(e), true) => {
            dice.hit(NoiseKind::EmailChanged);
            e.clone()
        }
        _ => person.email.clone(),
    };

    // --- names ---------------------------------------------------------------------
    let mut given = person.given.to_string();
    if dice.roll(NoiseKind::Initial, cfg.initial) {
        given = noise::initial(dice.rng, person.given).unwrap_or(given);
    } else {
        let nicks = names::nicknames(person.given);
        if !nicks.is_empty() && dice.roll(NoiseKind::Nickname, cfg.nickname) {
            given = dice.rng.pick(nicks).to_string();
        }
    }
    let mut family = person.family.clone();
    if let Some(f2) = &person.family2 {
        if !dice.roll(NoiseKind::SecondSurnameDropped, cfg.second_surname_dropped) {
            family = format!("{family} {f2}");
        }
    }
    let mut street = if source.has_street() {
        address.street_line(dice.rng.chance(0.4))
    } else {
        String::new()
    };
    let mut city = address.town().name.clone();

    // Diacritics lost for the whole record (a system or keyboard without them).
    let folding = if [&given, &family, &street, &city]
        .iter()
        .any(|s| noise::has_diacritics(s))
    {
        let p = (cfg.diacritics * diacritics_factor(source)).min(1.0);
        dice.roll(NoiseKind::Diacritics, p).then(|| {
            if person.culture == Culture::German && dice.rng.chance(0.6) {
                Fold::German
            } else {
                Fold::Strip
            }
        })
    } else {
        None
    };
    given = fold(folding, given);
    family = fold(folding, family);
    street = fold(folding, street);
    city = fold(folding, city);

    given = dice.typo(NoiseKind::TypoGiven, cfg.typo, given);
    family = dice.typo(NoiseKind::TypoFamily, cfg.typo, family);
    street = dice.typo(NoiseKind::TypoStreet, cfg.typo, street);
    city = dice.typo(NoiseKind::TypoCity, cfg.typo, city);

    let mut drop_comma = false;
    if dice.roll(NoiseKind::Punctuation, cfg.punctuation) {
        let which = dice
            .rng
            .below(if source == Source::Webshop { 5 } else { 4 });
        let target = match which {
            0 => &mut given,
            1 => &mut family,
            2 if !street.is_empty() => &mut street,
            2 | 3 => &mut city,
            _ => {
                drop_comma = true;
                &mut given
            }
        };
        if !drop_comma {
            *target = noise::punctuation(dice.rng, target);
        }
    }
    let mut email_case = false;
    if dice.roll(NoiseKind::Case, cfg.case) {
        let upper = dice.rng.chance(0.75);
        let apply = |s: &mut String| {
            *s = if upper {
                s.to_uppercase()
            } else {
                s.to_lowercase()
            };
        };
        apply(&mut given);
        apply(&mut family);
        if dice.rng.chance(0.5) {
            apply(&mut street);
            apply(&mut city);
        }
        email_case = dice.rng.chance(0.3);
    }

    // Titles and suffixes: academic titles and suffixes are written by some systems;
    // a courtesy title is noise.
    let mut title = String::new();
    if let Some(t) = person.title.filter(|_| dice.rng.chance(0.5)) {
        title = t.to_string();
    }
    if dice.roll(NoiseKind::Title, cfg.title) {
        let c = names::courtesy_title(dice.rng, person.culture, person.sex);
        title = if title.is_empty() {
            c.to_string()
        } else {
            format!("{c} {title}")
        };
    }
    let suffix = person
        .suffix
        .filter(|_| dice.rng.chance(0.7))
        .map(str::to_string)
        .unwrap_or_default();
    let swapped = dice.roll(NoiseKind::NameSwap, cfg.name_swap);
    let (first, last) = if swapped {
        (family, given)
    } else {
        (given, family)
    };
    let join = |a: &str, b: &str| -> String {
        match (a.is_empty(), b.is_empty()) {
            (true, _) => b.to_string(),
            (_, true) => a.to_string(),
            _ => format!("{a} {b}"),
        }
    };

    // --- contact -------------------------------------------------------------------
    let phone = match &person.phone {
        None => String::new(),
        Some(p) => {
            let home = home_country(source);
            let style = if p.country == home {
                if dice.roll(NoiseKind::PhoneFormat, cfg.phone_format) {
                    let options: &[PhoneStyle] = &[
                        PhoneStyle::NationalAlt,
                        PhoneStyle::NationalCompact,
                        PhoneStyle::International,
                        PhoneStyle::InternationalCompact,
                        PhoneStyle::InternationalTrunk,
                        PhoneStyle::DoubleZero,
                    ];
                    // "00" is how Europeans dial abroad; Americans do not write it.
                    let n = options.len() - usize::from(p.country == Country::Us);
                    *dice.rng.pick(&options[..n])
                } else {
                    PhoneStyle::National
                }
            } else if dice.roll(NoiseKind::PhoneNoCountryCode, cfg.phone_no_country_code) {
                *dice.rng.pick(&PhoneStyle::NATIONAL)
            } else if dice.roll(NoiseKind::PhoneFormat, cfg.phone_format) {
                if source == Source::Crm && dice.rng.chance(0.4) {
                    PhoneStyle::FromNorthAmerica
                } else {
                    *dice.rng.pick(&PhoneStyle::INTERNATIONAL[1..])
                }
            } else {
                PhoneStyle::International
            };
            dice.missing(cfg.missing, p.format(style))
        }
    };
    let mut email = email;
    if dice.roll(NoiseKind::TypoEmail, cfg.typo) {
        let (local, domain) = email.split_once('@').unwrap_or((email.as_str(), ""));
        email = if dice.rng.chance(0.8) || domain.is_empty() {
            format!(
                "{}@{domain}",
                noise::typo(dice.rng, local).unwrap_or_else(|| format!("{local}x"))
            )
        } else {
            format!(
                "{local}@{}",
                noise::typo(dice.rng, domain).unwrap_or_else(|| domain.to_string())
            )
        };
    }
    if email_case {
        // "John.Smith@Gmail.com": capitals as typed on a phone.
        let capital = |part: &str| {
            let mut c = part.chars();
            match c.next() {
                Some(f) => f.to_uppercase().chain(c).collect::<String>(),
                None => String::new(),
            }
        };
        if let Some((local, domain)) = email.split_once('@') {
            let local: Vec<String> = local.split('.').map(capital).collect();
            email = format!("{}@{}", local.join("."), capital(domain));
        }
    }
    // The web-shop login is the e-mail address: never missing there.
    if source != Source::Webshop {
        email = dice.missing(cfg.missing, email);
    }

    // --- birth date ----------------------------------------------------------------
    let birth = if dice.roll(NoiseKind::BirthDateMissing, cfg.birth_date_missing) {
        None
    } else {
        dice.stats.tried[NoiseKind::DateSwap as usize] += 1;
        dice.stats.tried[NoiseKind::DateDigit as usize] += 1;
        if dice.rng.chance(cfg.date_error) {
            let swapped = if dice.rng.chance(0.5) {
                noise::swap_day_month(person.birth)
            } else {
                None
            };
            if let Some(s) = swapped {
                dice.hit(NoiseKind::DateSwap);
                Some(s)
            } else if let Some(d) = noise::one_digit(dice.rng, person.birth) {
                dice.hit(NoiseKind::DateDigit);
                Some(d)
            } else {
                Some(person.birth)
            }
        } else {
            Some(person.birth)
        }
    };

    // --- address fields --------------------------------------------------------------
    let mut postcode = address.postcode.clone();
    if source == Source::Crm && address.country == Country::Us {
        if dice.rng.chance(0.1) {
            postcode = format!("{postcode}-{:04}", dice.rng.below(10_000));
        }
        if postcode.starts_with('0') && dice.roll(NoiseKind::LostLeadingZero, cfg.lost_leading_zero)
        {
            postcode = postcode.trim_start_matches('0').to_string();
        }
    }
    let street = dice.missing(cfg.missing, street);
    let postcode = dice.missing(cfg.missing, postcode);
    let city = dice.missing(cfg.missing, city);

    let fields = match source {
        Source::Crm => {
            let country = match address.country {
                Country::Us => match dice.rng.below(4) {
                    0 | 1 => "US".to_string(),
                    2 => "USA".to_string(),
                    _ => String::new(),
                },
                c if dice.rng.chance(0.6) => c.iso().to_string(),
                c => c.english_name().to_string(),
            };
            vec![
                join(&title, &first),
                join(&last, &suffix),
                street,
                city,
                address.state().to_string(),
                postcode,
                country,
                phone,
                email,
                birth.map(Date::mdy).unwrap_or_default(),
            ]
        }
        Source::Webshop => {
            let fam = join(&last, &suffix);
            let giv = join(&title, &first);
            let name = if drop_comma {
                join(&fam, &giv)
            } else {
                format!("{fam}, {giv}")
            };
            vec![
                name,
                email,
                phone,
                street,
                postcode,
                city,
                address.country.iso().to_string(),
                birth.map(Date::dmy).unwrap_or_default(),
                timestamp(plan.time, true),
            ]
        }
        Source::Support => {
            let product = *dice.rng.pick(PRODUCTS);
            let subject = dice.rng.pick(SUBJECTS).replace("{}", product);
            vec![
                timestamp(plan.time, false),
                join(&join(&title, &first), &join(&last, &suffix)),
                email,
                phone,
                postcode,
                city,
                address.country.english_name().to_string(),
                birth.map(Date::ymd).unwrap_or_default(),
                subject,
            ]
        }
    };
    Rendered {
        fields,
        flags: dice.flags,
    }
}
