//! Invented customers: households, family members, twins and namesakes.
//!
//! In: a random generator, the noise settings and the customers made so far in a chunk.
//! Out: [`Person`]s with their clean attribute values (the ground truth the sources
//! garble). A household shares family name and address, sometimes a landline and
//! rarely an e-mail address; twins also share the birth date; a namesake copies an
//! earlier customer's name and town but nothing else.

use super::names::{self, Culture, Sex};
use super::noise::{email_fold, Date};
use super::phone::Phone;
use super::places::{Address, Country};
use super::NoiseConfig;
use crate::util::Rng;

/// How a person came to be generated (kept for tests and statistics).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Relation {
    /// First member of a household.
    Head,
    /// Partner of the head.
    Partner,
    /// Child of the head (an adult living at the same address).
    Child,
    /// Twin of the previous member (same birth date).
    Twin,
    /// Shares given name, family name and town with an earlier, unrelated customer.
    Namesake,
}

/// One invented customer with clean values.
#[derive(Debug, Clone)]
pub struct Person {
    /// Entity index (0-based, global).
    pub entity: u32,
    /// Household number within the chunk.
    pub household: u32,
    /// How the person was generated.
    pub relation: Relation,
    /// Country of residence.
    pub country: Country,
    /// Naming culture.
    pub culture: Culture,
    /// Sex (for names and courtesy titles).
    pub sex: Sex,
    /// Given name.
    pub given: &'static str,
    /// Family name (the first one for Spanish double names).
    pub family: String,
    /// Second family name (Spanish double names).
    pub family2: Option<String>,
    /// Academic title, if any.
    pub title: Option<&'static str>,
    /// Generational suffix (Jr, Sr, III), if any.
    pub suffix: Option<&'static str>,
    /// Date of birth.
    pub birth: Date,
    /// Address.
    pub address: Address,
    /// Address after a move (used by later records), if the person moved.
    pub new_address: Option<Address>,
    /// Telephone number, if any.
    pub phone: Option<Phone>,
    /// E-mail address.
    pub email: String,
    /// E-mail address used by later records, if it changed.
    pub new_email: Option<String>,
    /// Entity whose e-mail address this person shares (a household address), if any.
    pub shares_email_of: Option<u32>,
}

impl Person {
    /// The full family name (both names for Spanish double names).
    pub fn full_family(&self) -> String {
        match &self.family2 {
            Some(f2) => format!("{} {f2}", self.family),
            None => self.family.clone(),
        }
    }
}

/// Webmail domains per country (common provider names).
fn webmail(country: Country) -> &'static [&'static str] {
    match country {
        Country::Us => &[
            "gmail.com",
            "yahoo.com",
            "outlook.com",
            "hotmail.com",
            "icloud.com",
            "aol.com",
        ],
        Country::Gb => &[
            "gmail.com",
            "btinternet.com",
            "yahoo.co.uk",
            "hotmail.co.uk",
            "outlook.com",
            "sky.com",
        ],
        Country::Ie => &[
            "gmail.com",
            "eircom.net",
            "hotmail.com",
            "yahoo.ie",
            "outlook.com",
        ],
        Country::De => &[
            "gmx.de",
            "web.de",
            "t-online.de",
            "gmail.com",
            "gmx.net",
            "outlook.de",
        ],
        Country::At => &["gmx.at", "aon.at", "gmail.com", "chello.at"],
        Country::Ch => &["bluewin.ch", "gmx.ch", "gmail.com", "hotmail.ch"],
        Country::Fr => &[
            "orange.fr",
            "free.fr",
            "gmail.com",
            "laposte.net",
            "sfr.fr",
            "wanadoo.fr",
        ],
        Country::Es => &[
            "gmail.com",
            "hotmail.es",
            "yahoo.es",
            "telefonica.net",
            "outlook.es",
        ],
        Country::Nl => &[
            "ziggo.nl",
            "kpnmail.nl",
            "gmail.com",
            "hotmail.nl",
            "planet.nl",
        ],
    }
}

/// Invented mail domains (the reserved `.example` top-level domain, RFC 2606).
const INVENTED_DOMAINS: &[&str] = &[
    "quillnet.example",
    "postfern.example",
    "larkmail.example",
    "brambleworks.example",
    "kettlebox.example",
    "hearthpost.example",
    "mailcrane.example",
    "tinmarsh.example",
    "owlpost.example",
    "driftwood-mail.example",
];

/// An e-mail address made from a person's names.
pub fn make_email(
    rng: &mut Rng,
    country: Country,
    culture: Culture,
    given: &str,
    family: &str,
    birth: Date,
) -> String {
    let german = culture == Culture::German && rng.chance(0.7);
    let g = {
        let g = email_fold(given, german);
        if g.is_empty() {
            "info".to_string()
        } else {
            g
        }
    };
    // Family names in mail addresses: particles are usually dropped or run together.
    let f = {
        let last_word = family.rsplit(' ').next().unwrap_or(family);
        let f = if rng.chance(0.5) {
            email_fold(last_word, german)
        } else {
            email_fold(family, german)
        };
        if f.is_empty() {
            "mail".to_string()
        } else {
            f
        }
    };
    let gi = &g[..1];
    let yy = birth.y % 100;
    let local = match rng.below(100) {
        0..=29 => format!("{g}.{f}"),
        30..=39 => format!("{gi}{f}"),
        40..=44 => format!("{g}_{f}"),
        45..=54 => format!("{g}{f}"),
        55..=59 => format!("{f}.{g}"),
        60..=71 => format!("{g}.{f}{yy:02}"),
        72..=83 => format!("{g}{}", 1 + rng.below(9999)),
        84..=89 => format!("{f}{gi}{}", rng.below(100)),
        90..=94 => format!("{g}.{}", &f[..1]),
        _ => format!("{gi}.{f}{}", 1 + rng.below(99)),
    };
    let domain = if rng.chance(0.3) {
        rng.pick(INVENTED_DOMAINS)
    } else {
        rng.pick(webmail(country))
    };
    format!("{local}@{domain}")
}

/// A birth year between 1938 and 2004, weighted towards the middle.
fn birth_date(rng: &mut Rng) -> Date {
    // Sum of two uniforms: a triangular distribution centred on 1971.
    let y = 1938 + (rng.below(34) + rng.below(34)) as i32;
    let m = 1 + rng.below(12) as u32;
    let d = 1 + rng.below(u64::from(super::noise::days_in_month(y, m))) as u32;
    Date { y, m, d }
}

/// A given name different from (and no nickname of) the names in `taken`.
fn distinct_given(rng: &mut Rng, culture: Culture, sex: Sex, taken: &[&str]) -> &'static str {
    let mut g = names::given_name(rng, culture, sex);
    for _ in 0..20 {
        let clash = taken.iter().any(|t| {
            *t == g || names::nicknames(t).contains(&g) || names::nicknames(g).contains(t)
        });
        if !clash {
            break;
        }
        g = names::given_name(rng, culture, sex);
    }
    g
}

fn other_sex(rng: &mut Rng, s: Sex) -> Sex {
    if rng.chance(0.9) {
        match s {
            Sex::Female => Sex::Male,
            Sex::Male => Sex::Female,
        }
    } else {
        s
    }
}

fn random_sex(rng: &mut Rng) -> Sex {
    if rng.chance(0.5) {
        Sex::Female
    } else {
        Sex::Male
    }
}

/// Generates customers household by household.
pub struct PeopleMaker<'a> {
    cfg: &'a NoiseConfig,
    /// Customers made so far in this chunk.
    pub people: Vec<Person>,
    first_entity: u32,
    households: u32,
}

impl<'a> PeopleMaker<'a> {
    /// A maker whose first person gets entity index `first_entity`.
    pub fn new(cfg: &'a NoiseConfig, first_entity: u32, capacity: usize) -> Self {
        PeopleMaker {
            cfg,
            people: Vec::with_capacity(capacity),
            first_entity,
            households: 0,
        }
    }

    fn next_entity(&self) -> u32 {
        self.first_entity + self.people.len() as u32
    }

    /// Personal extras shared by every new person: title, phone, e-mail, changes.
    #[allow(clippy::too_many_arguments)]
    fn finish(
        &mut self,
        rng: &mut Rng,
        relation: Relation,
        country: Country,
        culture: Culture,
        sex: Sex,
        given: &'static str,
        family: String,
        family2: Option<String>,
        birth: Date,
        address: Address,
        landline: Option<&Phone>,
        shared_email: Option<(u32, &str)>,
    ) {
        let title =
            (birth.y < 1990 && rng.chance(0.04)).then(|| names::academic_title(rng, culture));
        let suffix = (country == Country::Us
            && culture == Culture::English
            && sex == Sex::Male
            && rng.chance(0.03))
        .then(|| *rng.pick(&names::SUFFIXES[2..]));
        let phone = if rng.chance(0.03) {
            None
        } else if let Some(l) = landline.filter(|_| rng.chance(0.5)) {
            Some(l.clone())
        } else {
            Some(Phone::random(rng, country, address.town().state, true))
        };
        let full_family = match &family2 {
            Some(f2) => format!("{family} {f2}"),
            None => family.clone(),
        };
        let email = match shared_email {
            Some((_, e)) => e.to_string(),
            None => make_email(rng, country, culture, given, &full_family, birth),
        };
        let new_address = rng.chance(self.cfg.moved).then(|| address.moved(rng));
        let new_email = rng.chance(self.cfg.email_change).then(|| loop {
            let e = make_email(rng, country, culture, given, &full_family, birth);
            if e != email {
                break e;
            }
        });
        self.people.push(Person {
            entity: self.next_entity(),
            household: self.households,
            relation,
            country,
            culture,
            sex,
            given,
            family,
            family2,
            title,
            suffix,
            birth,
            address,
            new_address,
            phone,
            email,
            new_email,
            shares_email_of: shared_email.map(|(e, _)| e),
        });
    }

    /// Add one household (or one namesake) but never more than `limit` people in total.
    pub fn add_household(&mut self, rng: &mut Rng, limit: usize) {
        let cfg = self.cfg;
        if self.people.len() >= limit {
            return;
        }
        self.households += 1;
        // A namesake of an earlier customer: same names and town, nothing else shared.
        if !self.people.is_empty() && rng.chance(cfg.namesake) {
            let i = rng.below(self.people.len() as u64) as usize;
            let o = &self.people[i];
            let (country, culture, sex, given) = (o.country, o.culture, o.sex, o.given);
            let (family, family2, town) = (o.family.clone(), o.family2.clone(), o.address.town);
            let address = Address::random_in(rng, country, town);
            let birth = birth_date(rng);
            self.finish(
                rng,
                Relation::Namesake,
                country,
                culture,
                sex,
                given,
                family,
                family2,
                birth,
                address,
                None,
                None,
            );
            return;
        }
        let country = Country::draw(rng);
        let culture = country.draw_culture(rng);
        let address = Address::random(rng, country);
        let family = names::family_name(rng, culture);
        let (family, family2) = match family.split_once(' ') {
            // Spanish double names: "García López"; particles stay with their name.
            Some((a, b))
                if culture == Culture::Spanish
                    && a.chars().next().is_some_and(char::is_uppercase)
                    && b.chars().next().is_some_and(char::is_uppercase) =>
            {
                (a.to_string(), Some(b.to_string()))
            }
            _ => (family, None),
        };
        let landline = Phone::random(rng, country, address.town().state, false);
        let size = if rng.chance(cfg.household) {
            match rng.below(100) {
                0..=59 => 2,
                60..=84 => 3,
                _ => 4,
            }
        } else {
            1
        };
        let twins = size >= 2 && rng.chance(cfg.twins);
        let head_sex = random_sex(rng);
        let head_birth = birth_date(rng);
        let head_given = names::given_name(rng, culture, head_sex);
        let head_index = self.people.len();
        self.finish(
            rng,
            Relation::Head,
            country,
            culture,
            head_sex,
            head_given,
            family.clone(),
            family2.clone(),
            head_birth,
            address.clone(),
            Some(&landline),
            None,
        );
        let head_email = self.people[head_index].email.clone();
        let head_entity = self.people[head_index].entity;
        let mut taken: Vec<&'static str> = vec![head_given];
        let mut previous_birth = head_birth;
        for k in 1..size {
            if self.people.len() >= limit {
                break;
            }
            let is_twin = twins && k == size - 1;
            let (relation, sex, birth) = if is_twin {
                (Relation::Twin, random_sex(rng), previous_birth)
            } else if k == 1 && !(twins && size <= 3) {
                let offset = rng.below(13) as i64 - 6;
                let y = (head_birth.y as i64 + offset).clamp(1935, 2003) as i32;
                let d = head_birth
                    .d
                    .min(super::noise::days_in_month(y, head_birth.m));
                let birth = Date::new(y, head_birth.m, d).unwrap_or(head_birth);
                // Partner: a different day of birth.
                let birth = Date::from_days(birth.to_days() + 1 + rng.below(360) as i64);
                (Relation::Partner, other_sex(rng, head_sex), birth)
            } else {
                // An adult child; twins of the head when the household is just the two.
                let y = (head_birth.y + 22 + rng.below(16) as i32).min(2004);
                let birth = Date::new(y, 1 + rng.below(12) as u32, 1 + rng.below(28) as u32)
                    .unwrap_or(head_birth);
                (Relation::Child, random_sex(rng), birth)
            };
            previous_birth = birth;
            // US sons named after their father get Jr / Sr (handled below).
            let junior = relation == Relation::Child
                && sex == Sex::Male
                && head_sex == Sex::Male
                && country == Country::Us
                && culture == Culture::English
                && rng.chance(0.15);
            let given = if junior {
                head_given
            } else {
                distinct_given(rng, culture, sex, &taken)
            };
            taken.push(given);
            let shared = rng
                .chance(0.05)
                .then_some((head_entity, head_email.as_str()));
            self.finish(
                rng,
                relation,
                country,
                culture,
                sex,
                given,
                family.clone(),
                family2.clone(),
                birth,
                address.clone(),
                Some(&landline),
                shared,
            );
            if junior {
                let last = self.people.len() - 1;
                self.people[last].suffix = Some("Jr");
                self.people[head_index].suffix = Some("Sr.");
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn make(n: usize, seed: u64, cfg: &NoiseConfig) -> Vec<Person> {
        let mut rng = Rng::new(seed);
        let mut m = PeopleMaker::new(cfg, 0, n);
        while m.people.len() < n {
            m.add_household(&mut rng, n);
        }
        m.people
    }

    #[test]
    fn households_share_family_name_and_address() {
        let cfg = NoiseConfig::default();
        let people = make(5000, 1, &cfg);
        assert_eq!(people.len(), 5000);
        for (i, p) in people.iter().enumerate() {
            assert_eq!(p.entity as usize, i);
            if matches!(
                p.relation,
                Relation::Partner | Relation::Child | Relation::Twin
            ) {
                let head = people[..i]
                    .iter()
                    .rev()
                    .find(|h| h.household == p.household && h.relation == Relation::Head)
                    .expect("a head before every member");
                assert_eq!(head.family, p.family);
                assert_eq!(head.address, p.address);
                if p.suffix != Some("Jr") {
                    assert_ne!(head.given, p.given);
                }
            }
            if p.relation == Relation::Twin {
                assert_eq!(people[i - 1].birth, p.birth);
                assert_ne!(people[i - 1].given, p.given);
            }
            assert!(p.email.contains('@') && p.email.is_ascii(), "{}", p.email);
            if let Some(e) = &p.new_email {
                assert_ne!(e, &p.email);
            }
            assert!((1935..=2004).contains(&p.birth.y));
        }
    }

    #[test]
    fn namesakes_share_name_and_town_only() {
        let cfg = NoiseConfig {
            namesake: 0.2,
            ..NoiseConfig::default()
        };
        let people = make(3000, 2, &cfg);
        let namesakes: Vec<&Person> = people
            .iter()
            .filter(|p| p.relation == Relation::Namesake)
            .collect();
        assert!(namesakes.len() > 300, "{}", namesakes.len());
        for n in namesakes {
            let twin = people
                .iter()
                .find(|o| {
                    o.entity != n.entity
                        && o.given == n.given
                        && o.family == n.family
                        && o.address.town == n.address.town
                        && o.country == n.country
                })
                .expect("an earlier customer with the same name in the same town");
            assert!(twin.entity < n.entity);
        }
    }

    #[test]
    fn household_and_twin_rates_roughly_as_configured() {
        let cfg = NoiseConfig {
            household: 0.3,
            twins: 0.1,
            namesake: 0.0,
            ..NoiseConfig::default()
        };
        let people = make(40_000, 3, &cfg);
        let heads = people
            .iter()
            .filter(|p| p.relation == Relation::Head)
            .count();
        let mut sizes = std::collections::HashMap::new();
        for p in &people {
            *sizes.entry(p.household).or_insert(0u32) += 1;
        }
        let multi = sizes.values().filter(|&&s| s > 1).count();
        let share = multi as f64 / heads as f64;
        assert!((0.27..0.33).contains(&share), "{share}");
        let twins = people
            .iter()
            .filter(|p| p.relation == Relation::Twin)
            .count();
        let twin_share = twins as f64 / multi as f64;
        assert!((0.08..0.12).contains(&twin_share), "{twin_share}");
    }
}
