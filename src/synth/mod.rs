//! Stage `synth`: invented multi-source customer data with ground truth.
//!
//! In: a [`SynthConfig`] (number of customers, seed, [`NoiseConfig`]). Out: a
//! [`Dataset`] with the records of three source systems of the invented retailer
//! "Quillberry Home & Outdoor" and the truth (which records belong to which customer);
//! [`write_dataset`] writes them as CSV files plus a linkage spec and a truth file.
//!
//! The sources are
//! - `crm` (`crm_contacts.csv`): a legacy CRM of the North-American stores: split names,
//!   US dates (`MM/DD/YYYY`), US phone formats, often ASCII only;
//! - `webshop` (`webshop_accounts.csv`): the continental-European web shop: one name
//!   column `Family, Given`, German dates (`DD.MM.YYYY`), German phone formats;
//! - `support` (`support_tickets.csv`): the UK/Irish support desk: one name column
//!   `Given Family`, ISO dates, no street.
//!
//! Every person, address, phone number and e-mail address is invented (see
//! [`names`], [`places`], [`phone`]). Customers appear in one to three sources, some
//! twice in one source, and every record is garbled with the kinds of noise listed in
//! [`NoiseKind`] at the rates of [`NoiseConfig`].
//!
//! Generation runs in chunks of [`CHUNK`] customers, each with its own random stream
//! derived from the seed and the chunk number, so the output is the same for a seed on
//! any number of threads.

pub mod names;
pub mod noise;
pub mod people;
pub mod phone;
pub mod places;
mod render;
mod write;

use std::collections::HashMap;

use rayon::prelude::*;

use crate::util::{stable_hash, Rng};
use people::{PeopleMaker, Person};
use render::{render, RecordPlan};

pub use write::{spec_toml, write_dataset, Summary};

/// Customers per generation chunk (fixed: the output must not depend on the threads).
pub const CHUNK: usize = 1000;

/// Largest number of customers [`SynthConfig::check`] accepts.
pub const MAX_CUSTOMERS: usize = 50_000_000;

/// The three invented source systems.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Source {
    /// The legacy CRM (`crm_contacts.csv`).
    Crm,
    /// The web shop (`webshop_accounts.csv`).
    Webshop,
    /// The support desk (`support_tickets.csv`).
    Support,
}

impl Source {
    /// All sources, in file order.
    pub const ALL: [Source; 3] = [Source::Crm, Source::Webshop, Source::Support];

    /// Source name as used in the truth file and the spec.
    pub fn name(self) -> &'static str {
        match self {
            Source::Crm => "crm",
            Source::Webshop => "webshop",
            Source::Support => "support",
        }
    }

    /// File name of the source's CSV file.
    pub fn file_name(self) -> &'static str {
        match self {
            Source::Crm => "crm_contacts.csv",
            Source::Webshop => "webshop_accounts.csv",
            Source::Support => "support_tickets.csv",
        }
    }

    /// CSV header, id column first.
    pub fn header(self) -> &'static [&'static str] {
        match self {
            Source::Crm => &[
                "contact_id",
                "first_name",
                "last_name",
                "street",
                "city",
                "state",
                "zip",
                "country",
                "phone",
                "email",
                "dob",
            ],
            Source::Webshop => &[
                "account_id",
                "name",
                "email",
                "phone",
                "address_line",
                "postal_code",
                "town",
                "country_code",
                "birthday",
                "registered",
            ],
            Source::Support => &[
                "ticket_id",
                "opened",
                "customer_name",
                "email",
                "phone",
                "postcode",
                "city",
                "country",
                "date_of_birth",
                "subject",
            ],
        }
    }

    /// Source id of the record at position `index` (0-based) in file order.
    pub fn format_id(self, index: usize) -> String {
        match self {
            Source::Crm => format!("C{:07}", index + 1),
            Source::Webshop => format!("{}", 100_001 + index),
            Source::Support => format!("QB-T{:06}", index + 1),
        }
    }

    fn has_street(self) -> bool {
        self != Source::Support
    }

    fn index(self) -> usize {
        self as usize
    }
}

/// Entity id of customer `index` (0-based) in the truth file.
pub fn entity_id(index: u32) -> String {
    format!("Q{:07}", u64::from(index) + 1)
}

/// The kinds of noise (and of structure) the generator puts into the data.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum NoiseKind {
    /// A second record of the same customer in the same source.
    Duplicate = 0,
    /// The record has the customer's newer address.
    Moved,
    /// The record has the customer's newer e-mail address.
    EmailChanged,
    /// One edit in the given name.
    TypoGiven,
    /// One edit in the family name.
    TypoFamily,
    /// One edit in the street line.
    TypoStreet,
    /// One edit in the town.
    TypoCity,
    /// One edit in the e-mail address.
    TypoEmail,
    /// A nickname instead of the given name (Bill for William).
    Nickname,
    /// The given name reduced to its initial ("J.").
    Initial,
    /// Given and family name swapped.
    NameSwap,
    /// A courtesy title added (Mr, Frau, Mme).
    Title,
    /// The second of two Spanish family names left out.
    SecondSurnameDropped,
    /// Diacritics dropped or transliterated (Müller as Mueller or Muller).
    Diacritics,
    /// Names (and sometimes address) in upper or lower case.
    Case,
    /// Hyphens, apostrophes, full stops or commas dropped, stray spaces.
    Punctuation,
    /// A field left empty.
    Missing,
    /// No birth date.
    BirthDateMissing,
    /// The phone number written in a non-default style.
    PhoneFormat,
    /// A foreign phone number written without its country code.
    PhoneNoCountryCode,
    /// Day and month of the birth date swapped.
    DateSwap,
    /// One digit of the birth date wrong.
    DateDigit,
    /// A US ZIP code that lost its leading zero (spreadsheet damage).
    LostLeadingZero,
}

impl NoiseKind {
    /// Number of kinds.
    pub const COUNT: usize = 23;

    /// All kinds in index order.
    pub const ALL: [NoiseKind; NoiseKind::COUNT] = [
        NoiseKind::Duplicate,
        NoiseKind::Moved,
        NoiseKind::EmailChanged,
        NoiseKind::TypoGiven,
        NoiseKind::TypoFamily,
        NoiseKind::TypoStreet,
        NoiseKind::TypoCity,
        NoiseKind::TypoEmail,
        NoiseKind::Nickname,
        NoiseKind::Initial,
        NoiseKind::NameSwap,
        NoiseKind::Title,
        NoiseKind::SecondSurnameDropped,
        NoiseKind::Diacritics,
        NoiseKind::Case,
        NoiseKind::Punctuation,
        NoiseKind::Missing,
        NoiseKind::BirthDateMissing,
        NoiseKind::PhoneFormat,
        NoiseKind::PhoneNoCountryCode,
        NoiseKind::DateSwap,
        NoiseKind::DateDigit,
        NoiseKind::LostLeadingZero,
    ];

    /// Short name for summaries.
    pub fn name(self) -> &'static str {
        match self {
            NoiseKind::Duplicate => "duplicate",
            NoiseKind::Moved => "moved",
            NoiseKind::EmailChanged => "email_changed",
            NoiseKind::TypoGiven => "typo_given",
            NoiseKind::TypoFamily => "typo_family",
            NoiseKind::TypoStreet => "typo_street",
            NoiseKind::TypoCity => "typo_city",
            NoiseKind::TypoEmail => "typo_email",
            NoiseKind::Nickname => "nickname",
            NoiseKind::Initial => "initial",
            NoiseKind::NameSwap => "name_swap",
            NoiseKind::Title => "title",
            NoiseKind::SecondSurnameDropped => "second_surname_dropped",
            NoiseKind::Diacritics => "diacritics",
            NoiseKind::Case => "case",
            NoiseKind::Punctuation => "punctuation",
            NoiseKind::Missing => "missing",
            NoiseKind::BirthDateMissing => "birth_date_missing",
            NoiseKind::PhoneFormat => "phone_format",
            NoiseKind::PhoneNoCountryCode => "phone_no_country_code",
            NoiseKind::DateSwap => "date_swap",
            NoiseKind::DateDigit => "date_digit",
            NoiseKind::LostLeadingZero => "lost_leading_zero",
        }
    }

    /// The bit of this kind in [`Record::noise`].
    pub fn bit(self) -> u32 {
        1 << self as u32
    }
}

/// Rates of every kind of noise and structure. All values are probabilities in
/// `[0, 1]`; see each field for what it applies to.
#[derive(Debug, Clone, PartialEq)]
pub struct NoiseConfig {
    /// Share of customers found in exactly two sources.
    pub in_two_sources: f64,
    /// Share of customers found in all three sources (the rest are in one).
    pub in_three_sources: f64,
    /// Per customer and source: a second record in the same source.
    pub duplicate: f64,
    /// Per household: more than one customer at the address (partner, adult children).
    pub household: f64,
    /// Per multi-person household: two of its members are twins.
    pub twins: f64,
    /// Per household: instead, an unrelated namesake of an earlier customer in the same
    /// town.
    pub namesake: f64,
    /// Per customer: a newer address used by the later records.
    pub moved: f64,
    /// Per customer: a newer e-mail address used by the later records.
    pub email_change: f64,
    /// Per field (given, family, street, town, e-mail): one typing error.
    pub typo: f64,
    /// Per record whose given name has a known nickname: the nickname is used.
    pub nickname: f64,
    /// Per record: given and family name swapped.
    pub name_swap: f64,
    /// Per record: the given name reduced to its initial.
    pub initial: f64,
    /// Per record: a courtesy title added to the name.
    pub title: f64,
    /// Per record with a Spanish double family name: the second one left out.
    pub second_surname_dropped: f64,
    /// Per record with diacritics: all of them dropped or transliterated. Multiplied
    /// by 3 in the CRM (legacy, ASCII) and by 0.5 in the web shop.
    pub diacritics: f64,
    /// Per record: names in upper or lower case.
    pub case: f64,
    /// Per record: punctuation or spacing changed in one field.
    pub punctuation: f64,
    /// Per optional field (street, postcode, town, phone, e-mail): left empty.
    pub missing: f64,
    /// Per record: no birth date.
    pub birth_date_missing: f64,
    /// Per phone number: written in a style other than the source's default.
    pub phone_format: f64,
    /// Per foreign phone number: written without its country code.
    pub phone_no_country_code: f64,
    /// Per birth date: day and month swapped or one digit wrong.
    pub date_error: f64,
    /// Per CRM record with a ZIP code starting with 0: the zero lost.
    pub lost_leading_zero: f64,
}

impl Default for NoiseConfig {
    fn default() -> Self {
        NoiseConfig {
            in_two_sources: 0.30,
            in_three_sources: 0.15,
            duplicate: 0.03,
            household: 0.12,
            twins: 0.03,
            namesake: 0.02,
            moved: 0.08,
            email_change: 0.08,
            typo: 0.03,
            nickname: 0.12,
            name_swap: 0.01,
            initial: 0.02,
            title: 0.03,
            second_surname_dropped: 0.25,
            diacritics: 0.2,
            case: 0.04,
            punctuation: 0.04,
            missing: 0.03,
            birth_date_missing: 0.25,
            phone_format: 0.25,
            phone_no_country_code: 0.3,
            date_error: 0.02,
            lost_leading_zero: 0.2,
        }
    }
}

impl NoiseConfig {
    /// Default noise with many more look-alikes: households (0.35), twins among them
    /// (0.15) and namesakes (0.10). Used to test clustering guards.
    pub fn hard() -> NoiseConfig {
        NoiseConfig {
            household: 0.35,
            twins: 0.15,
            namesake: 0.10,
            ..NoiseConfig::default()
        }
    }

    /// The rates by name, for checks and summaries.
    pub fn rates(&self) -> [(&'static str, f64); 23] {
        [
            ("in_two_sources", self.in_two_sources),
            ("in_three_sources", self.in_three_sources),
            ("duplicate", self.duplicate),
            ("household", self.household),
            ("twins", self.twins),
            ("namesake", self.namesake),
            ("moved", self.moved),
            ("email_change", self.email_change),
            ("typo", self.typo),
            ("nickname", self.nickname),
            ("name_swap", self.name_swap),
            ("initial", self.initial),
            ("title", self.title),
            ("second_surname_dropped", self.second_surname_dropped),
            ("diacritics", self.diacritics),
            ("case", self.case),
            ("punctuation", self.punctuation),
            ("missing", self.missing),
            ("birth_date_missing", self.birth_date_missing),
            ("phone_format", self.phone_format),
            ("phone_no_country_code", self.phone_no_country_code),
            ("date_error", self.date_error),
            ("lost_leading_zero", self.lost_leading_zero),
        ]
    }

    /// No noise at all: every customer in one source, clean values.
    pub fn clean() -> Self {
        NoiseConfig {
            in_two_sources: 0.0,
            in_three_sources: 0.0,
            duplicate: 0.0,
            household: 0.0,
            twins: 0.0,
            namesake: 0.0,
            moved: 0.0,
            email_change: 0.0,
            typo: 0.0,
            nickname: 0.0,
            name_swap: 0.0,
            initial: 0.0,
            title: 0.0,
            second_surname_dropped: 0.0,
            diacritics: 0.0,
            case: 0.0,
            punctuation: 0.0,
            missing: 0.0,
            birth_date_missing: 0.0,
            phone_format: 0.0,
            phone_no_country_code: 0.0,
            date_error: 0.0,
            lost_leading_zero: 0.0,
        }
    }
}

/// Settings of one generator run.
#[derive(Debug, Clone, PartialEq)]
pub struct SynthConfig {
    /// Number of distinct customers (entities).
    pub customers: usize,
    /// Random seed: the same seed gives byte-identical output.
    pub seed: u64,
    /// Noise rates.
    pub noise: NoiseConfig,
}

impl SynthConfig {
    /// Validate the settings: rates in `[0, 1]`, source shares summing to at most 1,
    /// at most [`MAX_CUSTOMERS`] customers.
    pub fn check(&self) -> crate::Result<()> {
        if self.customers == 0 {
            return Err(crate::Error::Usage(
                "`--customers 0`: generate at least one customer".into(),
            ));
        }
        if self.customers > MAX_CUSTOMERS {
            return Err(crate::Error::Usage(format!(
                "`--customers {}` is more than the generator supports ({MAX_CUSTOMERS})",
                self.customers
            )));
        }
        for (name, rate) in self.noise.rates() {
            if !(0.0..=1.0).contains(&rate) {
                return Err(crate::Error::Usage(format!(
                    "noise rate `{name}` is {rate}; it must be between 0 and 1"
                )));
            }
        }
        let both = self.noise.in_two_sources + self.noise.in_three_sources;
        if both > 1.0 {
            return Err(crate::Error::Usage(format!(
                "noise rates `in_two_sources` + `in_three_sources` add up to {both}; \
                 they must add up to at most 1"
            )));
        }
        Ok(())
    }
}

/// Counts of noise applied and tried, over all records.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct NoiseStats {
    /// Records generated.
    pub records: u64,
    /// How often each kind was applied (index: `NoiseKind as usize`).
    pub applied: [u64; NoiseKind::COUNT],
    /// How often each kind had a chance to be applied.
    pub tried: [u64; NoiseKind::COUNT],
}

impl NoiseStats {
    fn add(&mut self, other: &NoiseStats) {
        self.records += other.records;
        for k in 0..NoiseKind::COUNT {
            self.applied[k] += other.applied[k];
            self.tried[k] += other.tried[k];
        }
    }

    /// Times `kind` was applied.
    pub fn applied(&self, kind: NoiseKind) -> u64 {
        self.applied[kind as usize]
    }

    /// Observed rate of `kind`: applied / tried (0 when never tried).
    pub fn rate(&self, kind: NoiseKind) -> f64 {
        let t = self.tried[kind as usize];
        if t == 0 {
            0.0
        } else {
            self.applied[kind as usize] as f64 / t as f64
        }
    }
}

/// One generated row before it is put in file order.
#[derive(Debug, Clone)]
struct Row {
    /// File-order key: a random number (CRM) or the record timestamp.
    key: u64,
    /// Generation order (chunk, position), breaks ties of `key`.
    seq: u64,
    /// Entity index.
    entity: u32,
    /// Noise bits.
    flags: u32,
    /// Field values joined by [`SEP`].
    line: Box<str>,
}

/// Separator of the field values inside a stored row (never in generated text).
const SEP: char = '\u{1f}';

/// The records of one source, in file order.
#[derive(Debug, Clone)]
pub struct SourceTable {
    source: Source,
    rows: Vec<Row>,
}

/// One record of a [`SourceTable`].
#[derive(Debug, Clone, Copy)]
pub struct Record<'a> {
    /// Source of the record.
    pub source: Source,
    /// Position in file order (0-based).
    pub index: usize,
    /// Entity index of the customer (see [`entity_id`]).
    pub entity: u32,
    /// Noise kinds applied to the record ([`NoiseKind::bit`]).
    pub noise: u32,
    line: &'a str,
}

impl<'a> Record<'a> {
    /// Source id (first column).
    pub fn id(&self) -> String {
        self.source.format_id(self.index)
    }

    /// Entity id (truth).
    pub fn entity_id(&self) -> String {
        entity_id(self.entity)
    }

    /// The field values after the id column, in header order.
    pub fn values(&self) -> impl Iterator<Item = &'a str> {
        self.line.split(SEP)
    }

    /// The value of column `name` (the id column included).
    pub fn get(&self, name: &str) -> Option<String> {
        let pos = self.source.header().iter().position(|h| *h == name)?;
        if pos == 0 {
            Some(self.id())
        } else {
            self.values().nth(pos - 1).map(str::to_string)
        }
    }

    /// True when noise `kind` was applied to this record.
    pub fn has(&self, kind: NoiseKind) -> bool {
        self.noise & kind.bit() != 0
    }
}

impl SourceTable {
    /// The source.
    pub fn source(&self) -> Source {
        self.source
    }

    /// Number of records.
    pub fn len(&self) -> usize {
        self.rows.len()
    }

    /// True when there are no records.
    pub fn is_empty(&self) -> bool {
        self.rows.is_empty()
    }

    /// Record at file position `index`.
    pub fn record(&self, index: usize) -> Option<Record<'_>> {
        self.rows.get(index).map(|r| Record {
            source: self.source,
            index,
            entity: r.entity,
            noise: r.flags,
            line: &r.line,
        })
    }

    /// All records in file order.
    pub fn records(&self) -> impl Iterator<Item = Record<'_>> {
        self.rows.iter().enumerate().map(move |(index, r)| Record {
            source: self.source,
            index,
            entity: r.entity,
            noise: r.flags,
            line: &r.line,
        })
    }
}

/// Generated records of all sources with their truth.
#[derive(Debug, Clone)]
pub struct Dataset {
    customers: usize,
    tables: [SourceTable; 3],
    stats: NoiseStats,
}

impl Dataset {
    /// Number of customers (entities).
    pub fn customers(&self) -> usize {
        self.customers
    }

    /// The records of `source`.
    pub fn table(&self, source: Source) -> &SourceTable {
        &self.tables[source.index()]
    }

    /// Total number of records.
    pub fn records(&self) -> usize {
        self.tables.iter().map(SourceTable::len).sum()
    }

    /// Counts of noise tried and applied.
    pub fn stats(&self) -> &NoiseStats {
        &self.stats
    }

    /// Truth rows `(source, source_id, entity_id)`, sources in file order.
    pub fn truth(&self) -> impl Iterator<Item = (Source, String, String)> + '_ {
        self.tables
            .iter()
            .flat_map(|t| t.records().map(|r| (r.source, r.id(), r.entity_id())))
    }
}

/// Output of one chunk.
struct Chunk {
    rows: [Vec<Row>; 3],
    stats: NoiseStats,
    people: Vec<Person>,
}

/// Random seed of chunk `chunk` for run seed `seed`.
fn chunk_seed(seed: u64, chunk: usize) -> u64 {
    let mut bytes = Vec::with_capacity(32);
    bytes.extend_from_slice(b"samekey-synth");
    bytes.extend_from_slice(&seed.to_le_bytes());
    bytes.extend_from_slice(&(chunk as u64).to_le_bytes());
    stable_hash(&bytes)
}

/// Pick the sources a customer appears in.
fn pick_sources(rng: &mut Rng, cfg: &NoiseConfig, home: Source) -> Vec<Source> {
    let u = rng.next_f64();
    let k = if u < cfg.in_three_sources {
        3
    } else if u < cfg.in_three_sources + cfg.in_two_sources {
        2
    } else {
        1
    };
    // The two other sources, the more likely second source first: North-American and
    // British customers shop online more than they call; continental customers are
    // split evenly between the CRM and the support desk.
    let others: [Source; 2] = match home {
        Source::Crm => [Source::Webshop, Source::Support],
        Source::Support => [Source::Webshop, Source::Crm],
        Source::Webshop => [Source::Crm, Source::Support],
    };
    let first_weight = if home == Source::Webshop { 0.5 } else { 0.6 };
    let other = |rng: &mut Rng| {
        if rng.chance(first_weight) {
            others[0]
        } else {
            others[1]
        }
    };
    match k {
        3 => Source::ALL.to_vec(),
        2 => {
            if rng.chance(0.97) {
                vec![home, other(rng)]
            } else {
                others.to_vec()
            }
        }
        _ => {
            if rng.chance(0.97) {
                vec![home]
            } else {
                vec![other(rng)]
            }
        }
    }
}

/// The source most customers of `country` use.
fn home_source(country: places::Country) -> Source {
    use places::Country as C;
    match country {
        C::Us => Source::Crm,
        C::Gb | C::Ie => Source::Support,
        C::De | C::At | C::Ch | C::Fr | C::Es | C::Nl => Source::Webshop,
    }
}

/// Seconds since 1970 of a random moment between two dates.
fn random_time(rng: &mut Rng, from: noise::Date, to: noise::Date) -> i64 {
    let day = noise::Date::random_between(rng, from, to).to_days();
    // Office hours are more likely than nights.
    let hour = 7 + rng.below(15) as i64;
    day * 86_400 + hour * 3600 + rng.below(3600) as i64
}

/// The customers of chunk `chunk` (entities `start .. start + count`) and the chunk's
/// random generator, ready to render their records.
fn make_people(cfg: &SynthConfig, chunk: usize, start: usize, count: usize) -> (Vec<Person>, Rng) {
    let mut rng = Rng::new(chunk_seed(cfg.seed, chunk));
    let mut maker = PeopleMaker::new(&cfg.noise, start as u32, count);
    while maker.people.len() < count {
        maker.add_household(&mut rng, count);
    }
    (maker.people, rng)
}

/// The e-mail addresses of one customer, for the uniqueness pass.
struct EmailInfo {
    entity: u32,
    email: String,
    new_email: Option<String>,
    shares_email_of: Option<u32>,
}

/// Replacement e-mail addresses of one customer.
#[derive(Debug, Clone, Default)]
struct EmailFix {
    email: Option<String>,
    new_email: Option<String>,
}

/// `address` made unique among `taken` by digits before the `@` (digits from a stream
/// seeded by the run seed and the entity, so the result does not depend on threads).
fn disambiguate(
    seed: u64,
    entity: u32,
    salt: u8,
    address: &str,
    taken: &HashMap<String, u32>,
) -> String {
    let (local, domain) = address.split_once('@').unwrap_or((address, "mail.example"));
    let mut bytes = Vec::with_capacity(24);
    bytes.extend_from_slice(b"email");
    bytes.extend_from_slice(&seed.to_le_bytes());
    bytes.extend_from_slice(&entity.to_le_bytes());
    bytes.push(salt);
    let mut rng = Rng::new(stable_hash(&bytes));
    let mut width = 2;
    loop {
        let n = rng.below(10u64.pow(width));
        let candidate = format!("{local}{n:0w$}@{domain}", w = width as usize);
        if !taken.contains_key(&mailbox(&candidate)) {
            return candidate;
        }
        width = (width + 1).min(9);
    }
}

/// The mailbox an address delivers to, as its provider tells mailboxes apart: case does
/// not matter, and Gmail ignores dots in the local part and treats `googlemail.com` as
/// `gmail.com` (Gmail Help, "Dots don't matter in Gmail addresses"). Two customers
/// never get addresses of the same mailbox.
fn mailbox(address: &str) -> String {
    let lower = address.to_lowercase();
    match lower.split_once('@') {
        Some((local, "gmail.com" | "googlemail.com")) => {
            format!("{}@gmail.com", local.replace('.', ""))
        }
        _ => lower,
    }
}

/// Make every customer's e-mail addresses unique across customers (as mailboxes, see
/// [`mailbox`]), except addresses a household shares on purpose. Real providers do not
/// hand one mailbox to two people, but common names made from the same pattern collide
/// in large populations. The first customer (in entity order) keeps the address; later
/// ones get digits added.
fn unique_emails(seed: u64, infos: Vec<EmailInfo>) -> HashMap<u32, EmailFix> {
    let mut taken: HashMap<String, u32> = HashMap::with_capacity(infos.len() * 11 / 10);
    let mut fixes: HashMap<u32, EmailFix> = HashMap::new();
    for info in infos {
        if let Some(head) = info.shares_email_of {
            // Same address as the head of the household, after the head's fix if any.
            if let Some(e) = fixes.get(&head).and_then(|f| f.email.clone()) {
                fixes.entry(info.entity).or_default().email = Some(e);
            }
        } else {
            let email = if taken.contains_key(&mailbox(&info.email)) {
                let e = disambiguate(seed, info.entity, 0, &info.email, &taken);
                fixes.entry(info.entity).or_default().email = Some(e.clone());
                e
            } else {
                info.email
            };
            taken.insert(mailbox(&email), info.entity);
        }
        if let Some(new_email) = info.new_email {
            let new_email = if taken.contains_key(&mailbox(&new_email)) {
                let e = disambiguate(seed, info.entity, 1, &new_email, &taken);
                fixes.entry(info.entity).or_default().new_email = Some(e.clone());
                e
            } else {
                new_email
            };
            taken.insert(mailbox(&new_email), info.entity);
        }
    }
    fixes
}

/// Render the records of one chunk's customers, continuing the chunk's random stream.
fn render_chunk(
    cfg: &SynthConfig,
    chunk: usize,
    people: Vec<Person>,
    mut rng: Rng,
    keep: bool,
) -> Chunk {
    let noise_cfg = &cfg.noise;
    let mut rows: [Vec<Row>; 3] = Default::default();
    let mut stats = NoiseStats::default();
    let mut seq = (chunk as u64) << 32;
    let web_from = noise::Date {
        y: 2016,
        m: 1,
        d: 1,
    };
    let web_to = noise::Date {
        y: 2025,
        m: 10,
        d: 31,
    };
    let sup_from = noise::Date {
        y: 2019,
        m: 1,
        d: 1,
    };
    let sup_to = noise::Date {
        y: 2025,
        m: 11,
        d: 30,
    };
    let mut plans: Vec<RecordPlan> = Vec::with_capacity(6);
    for person in &people {
        plans.clear();
        for source in pick_sources(&mut rng, noise_cfg, home_source(person.country)) {
            stats.tried[NoiseKind::Duplicate as usize] += 1;
            let n = if rng.chance(noise_cfg.duplicate) {
                2
            } else {
                1
            };
            for i in 0..n {
                let time = match source {
                    Source::Crm => 0,
                    Source::Webshop => random_time(&mut rng, web_from, web_to),
                    Source::Support => random_time(&mut rng, sup_from, sup_to),
                };
                plans.push(RecordPlan {
                    source,
                    new_address: false,
                    new_email: false,
                    duplicate: i == 1,
                    time,
                });
            }
        }
        // Later records carry the newer address and e-mail.
        plans.sort_by_key(|p| (p.time, p.source));
        let n = plans.len();
        if n >= 2 {
            if person.new_address.is_some() {
                let split = 1 + rng.below(n as u64 - 1) as usize;
                for p in &mut plans[split..] {
                    p.new_address = true;
                }
            }
            if person.new_email.is_some() {
                let split = 1 + rng.below(n as u64 - 1) as usize;
                for p in &mut plans[split..] {
                    p.new_email = true;
                }
            }
        }
        for plan in &plans {
            let r = render(&mut rng, noise_cfg, &mut stats, person, plan);
            let key = match plan.source {
                Source::Crm => rng.next_u64(),
                _ => plan.time as u64,
            };
            let mut line = String::with_capacity(128);
            for (i, f) in r.fields.iter().enumerate() {
                if i > 0 {
                    line.push(SEP);
                }
                line.push_str(f);
            }
            rows[plan.source.index()].push(Row {
                key,
                seq,
                entity: person.entity,
                flags: r.flags,
                line: line.into_boxed_str(),
            });
            seq += 1;
        }
    }
    Chunk {
        rows,
        stats,
        people: if keep { people } else { Vec::new() },
    }
}

/// Generate the chunks of `cfg` in parallel (order of the result = chunk order).
///
/// Three passes: make the customers of every chunk and collect their e-mail addresses;
/// make the addresses unique (one sequential pass in entity order); make the customers
/// again (same random streams, so the same people), apply the e-mail fixes and render.
/// Making people twice costs less than keeping a million of them in memory.
fn generate_chunks(cfg: &SynthConfig, keep: bool) -> Vec<Chunk> {
    let customers = cfg.customers.min(MAX_CUSTOMERS);
    let chunks = customers.div_ceil(CHUNK);
    let span = |c: usize| (c * CHUNK, CHUNK.min(customers - c * CHUNK));
    let infos: Vec<EmailInfo> = (0..chunks)
        .into_par_iter()
        .flat_map_iter(|c| {
            let (start, count) = span(c);
            make_people(cfg, c, start, count)
                .0
                .into_iter()
                .map(|p| EmailInfo {
                    entity: p.entity,
                    email: p.email,
                    new_email: p.new_email,
                    shares_email_of: p.shares_email_of,
                })
        })
        .collect();
    let fixes = unique_emails(cfg.seed, infos);
    (0..chunks)
        .into_par_iter()
        .map(|c| {
            let (start, count) = span(c);
            let (mut people, rng) = make_people(cfg, c, start, count);
            for p in &mut people {
                if let Some(fix) = fixes.get(&p.entity) {
                    if let Some(e) = &fix.email {
                        p.email = e.clone();
                    }
                    if let Some(e) = &fix.new_email {
                        p.new_email = Some(e.clone());
                    }
                }
            }
            render_chunk(cfg, c, people, rng, keep)
        })
        .collect()
}

fn assemble(cfg: &SynthConfig, chunks: Vec<Chunk>) -> Dataset {
    let mut stats = NoiseStats::default();
    let mut tables: [Vec<Row>; 3] = Default::default();
    for (s, table) in tables.iter_mut().enumerate() {
        table.reserve(chunks.iter().map(|c| c.rows[s].len()).sum());
    }
    for mut chunk in chunks {
        stats.add(&chunk.stats);
        for (s, rows) in chunk.rows.iter_mut().enumerate() {
            tables[s].append(rows);
        }
    }
    let [crm, web, sup] = tables.map(|mut rows| {
        rows.par_sort_unstable_by_key(|r| (r.key, r.seq));
        rows
    });
    Dataset {
        customers: cfg.customers.min(MAX_CUSTOMERS),
        tables: [
            SourceTable {
                source: Source::Crm,
                rows: crm,
            },
            SourceTable {
                source: Source::Webshop,
                rows: web,
            },
            SourceTable {
                source: Source::Support,
                rows: sup,
            },
        ],
        stats,
    }
}

/// Generate the records of all sources for `cfg`. Deterministic for a seed, whatever
/// the number of threads. Rates outside `[0, 1]` act as if clamped; call
/// [`SynthConfig::check`] first to reject them.
pub fn generate(cfg: &SynthConfig) -> Dataset {
    assemble(cfg, generate_chunks(cfg, false))
}

/// Generate and also return the clean customers (for tests and inspection).
pub fn generate_with_people(cfg: &SynthConfig) -> (Dataset, Vec<Person>) {
    let chunks = generate_chunks(cfg, true);
    let mut people = Vec::with_capacity(cfg.customers);
    let mut chunks = chunks;
    for c in &mut chunks {
        people.append(&mut c.people);
    }
    (assemble(cfg, chunks), people)
}

#[cfg(test)]
mod tests;
