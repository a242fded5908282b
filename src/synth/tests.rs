//! Whole-generator tests: determinism, truth consistency, rates, conventions.

use std::collections::{HashMap, HashSet};

use super::people::{Person, Relation};
use super::places::Country;
use super::*;

fn config(customers: usize, seed: u64) -> SynthConfig {
    SynthConfig {
        customers,
        seed,
        noise: NoiseConfig::default(),
    }
}

fn files(dir: &std::path::Path) -> Vec<(String, Vec<u8>)> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        // The folder's machinery and the run manifest (it holds the run id and time).
        .filter(|n| !n.starts_with('.') && n != "current" && n != "manifest.json")
        .collect();
    names.sort();
    names
        .into_iter()
        .map(|n| {
            let bytes = std::fs::read(dir.join(&n)).unwrap();
            (n, bytes)
        })
        .collect()
}

#[test]
fn same_seed_gives_identical_files_and_other_seeds_differ() {
    let a = tempfile::tempdir().unwrap();
    let b = tempfile::tempdir().unwrap();
    let c = tempfile::tempdir().unwrap();
    write_dataset(&generate(&config(2500, 77)), a.path()).unwrap();
    write_dataset(&generate(&config(2500, 77)), b.path()).unwrap();
    write_dataset(&generate(&config(2500, 78)), c.path()).unwrap();
    let fa = files(a.path());
    assert_eq!(fa.len(), 5);
    assert_eq!(fa, files(b.path()));
    let fc = files(c.path());
    for ((name, x), (_, y)) in fa.iter().zip(&fc) {
        if name != "spec.toml" {
            assert_ne!(x, y, "{name} is the same for two seeds");
        }
    }
}

#[test]
fn output_does_not_depend_on_thread_count() {
    let cfg = config(3 * CHUNK + 123, 5);
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| generate(&cfg))
    };
    let one = run(1);
    let three = run(3);
    for s in Source::ALL {
        let a: Vec<(String, u32, String)> = one
            .table(s)
            .records()
            .map(|r| (r.id(), r.entity, r.values().collect::<Vec<_>>().join("|")))
            .collect();
        let b: Vec<(String, u32, String)> = three
            .table(s)
            .records()
            .map(|r| (r.id(), r.entity, r.values().collect::<Vec<_>>().join("|")))
            .collect();
        assert_eq!(a, b, "{}", s.name());
    }
    assert_eq!(one.stats(), three.stats());
}

#[test]
fn truth_covers_every_record_once_and_every_customer() {
    let cfg = config(4000, 11);
    let (data, people) = generate_with_people(&cfg);
    assert_eq!(people.len(), 4000);
    let truth: Vec<(Source, String, String)> = data.truth().collect();
    assert_eq!(truth.len(), data.records());
    let mut keys = HashSet::new();
    for (s, id, _) in &truth {
        assert!(keys.insert((*s, id.clone())), "duplicate id {id}");
    }
    let entities: HashSet<&str> = truth.iter().map(|(_, _, e)| e.as_str()).collect();
    assert_eq!(
        entities.len(),
        4000,
        "every customer has at least one record"
    );
    // The entity of a record is the person it was rendered from: its e-mail (when not
    // garbled) is the person's old or new address.
    let mut checked = 0;
    for s in Source::ALL {
        for r in data.table(s).records() {
            let p = &people[r.entity as usize];
            assert_eq!(p.entity, r.entity);
            let email = r.get("email").unwrap();
            let garbled = r.has(NoiseKind::TypoEmail) || r.has(NoiseKind::Case);
            if !garbled && !email.is_empty() {
                assert!(
                    email == p.email || Some(&email) == p.new_email.as_ref(),
                    "{email} vs {} / {:?}",
                    p.email,
                    p.new_email
                );
                checked += 1;
            }
        }
    }
    assert!(checked > data.records() * 8 / 10);
}

#[test]
fn entity_ids_are_shared_across_sources() {
    let data = generate(&config(5000, 12));
    let mut sources_of: HashMap<u32, HashSet<Source>> = HashMap::new();
    let mut records_of: HashMap<(u32, Source), usize> = HashMap::new();
    for s in Source::ALL {
        for r in data.table(s).records() {
            sources_of.entry(r.entity).or_default().insert(s);
            *records_of.entry((r.entity, s)).or_default() += 1;
        }
    }
    let mut by_count = [0usize; 4];
    for set in sources_of.values() {
        by_count[set.len()] += 1;
    }
    let n = sources_of.len() as f64;
    // Configured: 55 % in one source, 30 % in two, 15 % in three.
    assert!((by_count[1] as f64 / n - 0.55).abs() < 0.03, "{by_count:?}");
    assert!((by_count[2] as f64 / n - 0.30).abs() < 0.03, "{by_count:?}");
    assert!((by_count[3] as f64 / n - 0.15).abs() < 0.02, "{by_count:?}");
    // Within-source duplicates: configured 3 % per customer and source, at most 2.
    let pairs = records_of.len() as f64;
    let dups = records_of.values().filter(|&&c| c == 2).count() as f64;
    assert!(records_of.values().all(|&c| c <= 2));
    assert!((dups / pairs - 0.03).abs() < 0.01, "{}", dups / pairs);
}

#[test]
fn observed_noise_rates_match_the_configuration() {
    let cfg = SynthConfig {
        customers: 20_000,
        seed: 99,
        noise: NoiseConfig {
            typo: 0.05,
            nickname: 0.2,
            case: 0.06,
            ..NoiseConfig::default()
        },
    };
    let (data, people) = generate_with_people(&cfg);
    let st = data.stats();
    let n = &cfg.noise;
    let expect: &[(NoiseKind, f64)] = &[
        (NoiseKind::Duplicate, n.duplicate),
        (NoiseKind::TypoGiven, n.typo),
        (NoiseKind::TypoFamily, n.typo),
        (NoiseKind::TypoStreet, n.typo),
        (NoiseKind::TypoCity, n.typo),
        (NoiseKind::TypoEmail, n.typo),
        (NoiseKind::Nickname, n.nickname),
        (NoiseKind::Initial, n.initial),
        (NoiseKind::NameSwap, n.name_swap),
        (NoiseKind::Title, n.title),
        (NoiseKind::SecondSurnameDropped, n.second_surname_dropped),
        (NoiseKind::Case, n.case),
        (NoiseKind::Punctuation, n.punctuation),
        (NoiseKind::Missing, n.missing),
        (NoiseKind::BirthDateMissing, n.birth_date_missing),
        (NoiseKind::PhoneNoCountryCode, n.phone_no_country_code),
        (NoiseKind::LostLeadingZero, n.lost_leading_zero),
    ];
    for &(kind, rate) in expect {
        let tried = st.tried[kind as usize] as f64;
        assert!(tried > 500.0, "{} tried only {tried} times", kind.name());
        // Within four binomial standard deviations.
        let sd = (rate * (1.0 - rate) / tried).sqrt();
        let got = st.rate(kind);
        assert!(
            (got - rate).abs() < 4.0 * sd + 1e-9,
            "{}: {got} vs {rate}",
            kind.name()
        );
    }
    // Date errors: swap and digit together.
    let date_rate = (st.applied(NoiseKind::DateSwap) + st.applied(NoiseKind::DateDigit)) as f64
        / st.tried[NoiseKind::DateSwap as usize] as f64;
    assert!((date_rate - n.date_error).abs() < 0.006, "{date_rate}");
    // Moves and e-mail changes are per customer.
    let moved = people.iter().filter(|p| p.new_address.is_some()).count() as f64;
    assert!((moved / people.len() as f64 - n.moved).abs() < 0.01);
    let changed = people.iter().filter(|p| p.new_email.is_some()).count() as f64;
    assert!((changed / people.len() as f64 - n.email_change).abs() < 0.01);
    // Missing birth dates are visible in the files.
    let mut blank = 0usize;
    for s in Source::ALL {
        let col = Source::header(s)
            .iter()
            .position(|h| ["dob", "birthday", "date_of_birth"].contains(h))
            .unwrap();
        blank += data
            .table(s)
            .records()
            .filter(|r| r.values().nth(col - 1) == Some(""))
            .count();
    }
    let share = blank as f64 / data.records() as f64;
    assert!((share - n.birth_date_missing).abs() < 0.01, "{share}");
    // The structure is there: households, twins, namesakes, juniors.
    let count = |rel: Relation| people.iter().filter(|p| p.relation == rel).count();
    assert!(count(Relation::Partner) > 500);
    assert!(count(Relation::Twin) > 10);
    assert!(count(Relation::Namesake) > 100);
    assert!(people.iter().any(|p| p.suffix == Some("Jr")));
}

#[test]
fn flagged_noise_is_what_it_says() {
    let (data, people) = generate_with_people(&SynthConfig {
        customers: 8000,
        seed: 3,
        noise: NoiseConfig {
            typo: 0.1,
            nickname: 0.3,
            date_error: 0.2,
            ..NoiseConfig::default()
        },
    });
    let only = |r: &Record<'_>, kinds: &[NoiseKind]| {
        let allowed: u32 = kinds.iter().map(|k| k.bit()).sum();
        let name_noise = [
            NoiseKind::TypoGiven,
            NoiseKind::TypoFamily,
            NoiseKind::Nickname,
            NoiseKind::Initial,
            NoiseKind::NameSwap,
            NoiseKind::Title,
            NoiseKind::Diacritics,
            NoiseKind::Case,
            NoiseKind::Punctuation,
        ];
        let name_bits: u32 = name_noise.iter().map(|k| k.bit()).sum();
        r.noise & name_bits & !allowed == 0
    };
    let (mut typos, mut nicks, mut swaps, mut digits) = (0, 0, 0, 0);
    for r in data.table(Source::Crm).records() {
        let p: &Person = &people[r.entity as usize];
        let first = r.get("first_name").unwrap();
        // Without title noise (checked by `only`), the first name is the given name.
        let given = first.as_str();
        if p.title.is_some() {
            continue;
        }
        if r.has(NoiseKind::TypoGiven) && only(&r, &[NoiseKind::TypoGiven]) {
            assert_eq!(
                strsim::osa_distance(given, p.given),
                1,
                "{given} / {}",
                p.given
            );
            typos += 1;
        }
        if r.has(NoiseKind::Nickname) && only(&r, &[NoiseKind::Nickname]) {
            assert!(
                names::nicknames(p.given).contains(&given),
                "{given} / {}",
                p.given
            );
            nicks += 1;
        }
        if r.noise == 0 {
            assert_eq!(first, p.given);
        }
        let dob = r.get("dob").unwrap();
        if dob.is_empty() {
            continue;
        }
        let (m, rest) = dob.split_once('/').unwrap();
        let (d, y) = rest.split_once('/').unwrap();
        let got = noise::Date::new(y.parse().unwrap(), m.parse().unwrap(), d.parse().unwrap())
            .expect("a valid date");
        if r.has(NoiseKind::DateSwap) {
            assert_eq!(Some(got), noise::swap_day_month(p.birth));
            swaps += 1;
        } else if r.has(NoiseKind::DateDigit) {
            let a = format!("{:04}{:02}{:02}", p.birth.y, p.birth.m, p.birth.d);
            let b = format!("{:04}{:02}{:02}", got.y, got.m, got.d);
            assert_eq!(a.bytes().zip(b.bytes()).filter(|(x, y)| x != y).count(), 1);
            digits += 1;
        } else {
            assert_eq!(got, p.birth);
        }
    }
    assert!(
        typos > 50 && nicks > 30 && swaps > 20 && digits > 20,
        "{typos} {nicks} {swaps} {digits}"
    );
}

#[test]
fn clean_configuration_gives_clean_records() {
    let (data, people) = generate_with_people(&SynthConfig {
        customers: 1500,
        seed: 8,
        noise: NoiseConfig::clean(),
    });
    assert_eq!(data.records(), 1500);
    for s in Source::ALL {
        for r in data.table(s).records() {
            assert_eq!(r.noise, 0);
            let p = &people[r.entity as usize];
            assert_eq!(r.get("email").unwrap(), p.email);
        }
    }
    for r in data.table(Source::Crm).records() {
        let p = &people[r.entity as usize];
        let first = r.get("first_name").unwrap();
        assert!(first == p.given || first.ends_with(&format!(" {}", p.given)));
        assert!(r.get("last_name").unwrap().starts_with(&p.full_family()));
    }
}

#[test]
fn sources_hold_mostly_their_home_customers() {
    let (data, people) = generate_with_people(&config(6000, 21));
    let share = |s: Source, home: &[Country]| {
        let t = data.table(s);
        let n = t
            .records()
            .filter(|r| home.contains(&people[r.entity as usize].country))
            .count();
        n as f64 / t.len() as f64
    };
    assert!(share(Source::Crm, &[Country::Us]) > 0.55);
    let continental = [
        Country::De,
        Country::At,
        Country::Ch,
        Country::Fr,
        Country::Es,
        Country::Nl,
    ];
    assert!(share(Source::Webshop, &continental) > 0.6);
    assert!(share(Source::Support, &[Country::Gb, Country::Ie]) > 0.55);
}

/// At least 99 % of phone numbers written without phone noise parse as valid numbers of
/// their own country (reference: `phonenumber` 0.3.10 with libphonenumber metadata
/// 9.0.33, the region being the number's country).
#[test]
fn clean_phone_numbers_in_the_files_are_valid() {
    use phonenumber::country::Id;
    let (data, people) = generate_with_people(&config(5000, 31));
    let region = |c: Country| match c {
        Country::Us => Id::US,
        Country::Gb => Id::GB,
        Country::Ie => Id::IE,
        Country::De => Id::DE,
        Country::At => Id::AT,
        Country::Ch => Id::CH,
        Country::Fr => Id::FR,
        Country::Es => Id::ES,
        Country::Nl => Id::NL,
    };
    let (mut total, mut valid) = (0usize, 0usize);
    for s in Source::ALL {
        for r in data.table(s).records() {
            if r.has(NoiseKind::PhoneFormat) || r.has(NoiseKind::PhoneNoCountryCode) {
                continue;
            }
            let text = r.get("phone").unwrap();
            let Some(phone) = &people[r.entity as usize].phone else {
                continue;
            };
            if text.is_empty() {
                continue;
            }
            total += 1;
            if let Ok(n) = phonenumber::parse(Some(region(phone.country)), &text) {
                let e164 = n.format().mode(phonenumber::Mode::E164).to_string();
                if n.is_valid() && e164 == phone.e164() {
                    valid += 1;
                }
            }
        }
    }
    assert!(total > 3000, "{total}");
    assert!(valid as f64 >= 0.99 * total as f64, "{valid}/{total}");
}

#[test]
fn files_parse_as_csv_and_spec_as_toml() {
    let dir = tempfile::tempdir().unwrap();
    let data = generate(&config(1200, 4));
    let summary = write_dataset(&data, dir.path()).unwrap();
    assert_eq!(summary.entities, 1200);
    assert_eq!(summary.total_records(), data.records());
    for s in Source::ALL {
        let mut rd = csv::Reader::from_path(dir.path().join(s.file_name())).unwrap();
        let header: Vec<String> = rd.headers().unwrap().iter().map(str::to_string).collect();
        assert_eq!(header, s.header());
        let rows: Vec<csv::StringRecord> = rd.records().map(Result::unwrap).collect();
        assert_eq!(rows.len(), data.table(s).len());
        for (row, rec) in rows.iter().zip(data.table(s).records()) {
            assert_eq!(row.len(), header.len());
            assert_eq!(&row[0], rec.id());
        }
    }
    let truth = std::fs::read_to_string(dir.path().join("truth.csv")).unwrap();
    let mut lines = truth.lines();
    assert_eq!(lines.next(), Some("source,source_id,entity_id"));
    assert_eq!(lines.count(), data.records());
    let spec: toml::Value =
        toml::from_str(&std::fs::read_to_string(dir.path().join("spec.toml")).unwrap()).unwrap();
    let sources = spec["source"].as_array().unwrap();
    assert_eq!(sources.len(), 3);
    for (v, s) in sources.iter().zip(Source::ALL) {
        assert_eq!(v["name"].as_str(), Some(s.name()));
        assert_eq!(v["path"].as_str(), Some(s.file_name()));
        assert_eq!(v["id"].as_str(), Some(s.header()[0]));
        // Every mapped column exists in the file.
        for (_, col) in v["columns"].as_table().unwrap() {
            assert!(s.header().contains(&col.as_str().unwrap()), "{col}");
        }
    }
    assert_eq!(spec["compare"].as_array().unwrap().len(), 8);
    assert_eq!(spec["block"].as_array().unwrap().len(), 4);
    let text = summary.to_string();
    assert!(text.contains("crm") && text.contains("customers"), "{text}");
}

#[test]
fn zero_customers_write_headers_only() {
    let dir = tempfile::tempdir().unwrap();
    let data = generate(&config(0, 1));
    assert_eq!(data.records(), 0);
    let s = write_dataset(&data, dir.path()).unwrap();
    assert_eq!(s.total_records(), 0);
    let crm = std::fs::read_to_string(dir.path().join("crm_contacts.csv")).unwrap();
    assert_eq!(crm.lines().count(), 1);
}

#[test]
fn check_rejects_bad_settings() {
    assert!(config(10, 1).check().is_ok());
    let bad_rate = SynthConfig {
        noise: NoiseConfig {
            typo: 1.5,
            ..NoiseConfig::default()
        },
        ..config(10, 1)
    };
    let e = bad_rate.check().unwrap_err();
    assert!(e.is_bad_input() && e.to_string().contains("typo"), "{e}");
    let bad_mix = SynthConfig {
        noise: NoiseConfig {
            in_two_sources: 0.7,
            in_three_sources: 0.5,
            ..NoiseConfig::default()
        },
        ..config(10, 1)
    };
    assert!(bad_mix.check().is_err());
    assert!(config(MAX_CUSTOMERS + 1, 1).check().is_err());
}

#[test]
fn writing_into_a_file_path_fails_with_the_path() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("occupied");
    std::fs::write(&file, "x").unwrap();
    let e = write_dataset(&generate(&config(5, 1)), &file).unwrap_err();
    assert!(e.to_string().contains("occupied"), "{e}");
}

#[test]
fn emails_are_unique_across_customers_except_household_sharing() {
    let (_, people) = generate_with_people(&config(6000, 41));
    // Unique as mailboxes: Gmail addresses that differ only in dots are one mailbox.
    let mut owner: HashMap<String, u32> = HashMap::new();
    for p in &people {
        for e in std::iter::once(&p.email).chain(p.new_email.as_ref()) {
            if let Some(&o) = owner.get(&mailbox(e)) {
                assert_eq!(p.shares_email_of, Some(o), "{e} of {} and {o}", p.entity);
                assert_eq!(e, &p.email);
            } else {
                owner.insert(mailbox(e), p.entity);
            }
        }
    }
    assert!(people.iter().any(|p| p.shares_email_of.is_some()));
}

#[test]
fn gmail_mailboxes_ignore_dots_and_case() {
    // Gmail Help, "Dots don't matter in Gmail addresses"; googlemail.com is gmail.com.
    assert_eq!(mailbox("J.Smith@Gmail.com"), "jsmith@gmail.com");
    assert_eq!(mailbox("j.smith@googlemail.com"), "jsmith@gmail.com");
    // Other providers: only case.
    assert_eq!(mailbox("J.Smith@Example.org"), "j.smith@example.org");
}

#[test]
fn disambiguated_addresses_keep_their_domain() {
    let mut taken = HashMap::new();
    taken.insert(mailbox("john.smith@gmail.com"), 0);
    let a = disambiguate(1, 7, 0, "john.smith@gmail.com", &taken);
    assert!(
        a.starts_with("john.smith") && a.ends_with("@gmail.com") && a != "john.smith@gmail.com"
    );
    assert_eq!(a, disambiguate(1, 7, 0, "john.smith@gmail.com", &taken));
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig::with_cases(12))]

    /// For any size and seed, the records partition into exactly the configured
    /// customers: ids unique per source, every record one entity, every entity present,
    /// at most two records per customer and source.
    #[test]
    fn records_partition_into_customers(customers in 0usize..2_500, seed in proptest::prelude::any::<u64>()) {
        let data = generate(&config(customers, seed));
        let mut seen = vec![false; customers];
        let mut per_source: HashMap<(u32, Source), u8> = HashMap::new();
        for s in Source::ALL {
            let mut ids = HashSet::new();
            for r in data.table(s).records() {
                proptest::prop_assert!((r.entity as usize) < customers);
                proptest::prop_assert!(ids.insert(r.id()));
                proptest::prop_assert_eq!(r.values().count() + 1, s.header().len());
                seen[r.entity as usize] = true;
                *per_source.entry((r.entity, s)).or_default() += 1;
            }
        }
        proptest::prop_assert!(seen.iter().all(|&b| b));
        proptest::prop_assert!(per_source.values().all(|&n| n <= 2));
        proptest::prop_assert_eq!(data.truth().count(), data.records());
    }
}
