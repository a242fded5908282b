//! Benchmarks of the string kernels in `samekey::compare::strings` against `strsim`
//! (and Soundex against `rphonetic`).
//!
//! Data: invented names built from syllables by a seeded generator (no real people's
//! data), as pairs of a name and a typo'd variant or of two unrelated names. Every group
//! first asserts that our kernel and the reference give the same results on its data.
//!
//! Run with `cargo bench --bench strings`; each group reports time per iteration over a
//! fixed number of pairs, and criterion's throughput line gives pairs per second.
// `criterion_group!` generates a public function without documentation.
#![allow(missing_docs)]

use std::hint::black_box;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion, Throughput};
use rphonetic::Encoder;
use samekey::compare::strings::{
    jaro_winkler, levenshtein, levenshtein_within, osa_distance, soundex, JaroCorpus, JaroMatcher,
};
use samekey::util::Rng;

const ASCII_SYLLABLES: &[&str] = &[
    "AN", "BER", "CHRI", "DA", "EL", "FIN", "GAR", "HEL", "IN", "JO", "KA", "LEN", "MAR", "NO",
    "OS", "PE", "RA", "SON", "TI", "UL", "VEN", "WIL", "ZA", "BRO", "STE", "MI", "LA", "TON", "RI",
    "SCH", "MEI", "ER", "HOF", "MANN", "KO", "VIC",
];

const WIDE_SYLLABLES: &[&str] = &[
    "MÜL", "LER", "BÄR", "GRÖ", "NER", "ØST", "ÅS", "JÉ", "RÔ", "ŁU", "KASZ", "DVO", "ŘÁK", "SCHÜ",
    "TZE", "ANN", "ELI", "SÉ",
];

/// A name of 2..=4 syllables.
fn word(rng: &mut Rng, syllables: &[&str]) -> String {
    let n = 2 + rng.below(3) as usize;
    (0..n).map(|_| *rng.pick(syllables)).collect()
}

/// "GIVEN FAMILY" with the given syllable set.
fn full_name(rng: &mut Rng, syllables: &[&str]) -> String {
    format!("{} {}", word(rng, syllables), word(rng, syllables))
}

/// One random edit: substitution, deletion, insertion or adjacent swap.
fn typo(rng: &mut Rng, s: &str) -> String {
    let mut c: Vec<char> = s.chars().collect();
    if c.len() < 2 {
        return s.to_owned();
    }
    let i = rng.below(c.len() as u64 - 1) as usize;
    let letter = char::from(b'A' + rng.below(26) as u8);
    match rng.below(4) {
        0 => c[i] = letter,
        1 => {
            c.remove(i);
        }
        2 => c.insert(i, letter),
        _ => c.swap(i, i + 1),
    }
    c.into_iter().collect()
}

/// `n` pairs: half (name, one or two typos of it), half unrelated names.
fn pairs(seed: u64, n: usize, make: impl Fn(&mut Rng) -> String) -> Vec<(String, String)> {
    let mut rng = Rng::new(seed);
    (0..n)
        .map(|i| {
            let a = make(&mut rng);
            let b = if i % 2 == 0 {
                let once = typo(&mut rng, &a);
                if rng.chance(0.5) {
                    typo(&mut rng, &once)
                } else {
                    once
                }
            } else {
                make(&mut rng)
            };
            (a, b)
        })
        .collect()
}

struct Data {
    ascii: Vec<(String, String)>,
    wide: Vec<(String, String)>,
    long: Vec<(String, String)>,
    family: Vec<String>,
}

fn data() -> Data {
    let ascii = pairs(1, 1000, |r| word(r, ASCII_SYLLABLES));
    let wide = pairs(2, 1000, |r| word(r, WIDE_SYLLABLES));
    // Street-line plus city, 70-100 characters: beyond one 64-bit word.
    let long = pairs(3, 200, |r| {
        let mut s = String::new();
        while s.chars().count() < 70 {
            s.push_str(&full_name(r, ASCII_SYLLABLES));
            s.push(' ');
        }
        s
    });
    let family = ascii.iter().map(|p| p.0.clone()).collect();
    Data {
        ascii,
        wide,
        long,
        family,
    }
}

fn config() -> Criterion {
    Criterion::default()
        .sample_size(20)
        .warm_up_time(Duration::from_millis(500))
        .measurement_time(Duration::from_secs(2))
}

fn bench_jaro_winkler_pairs(c: &mut Criterion) {
    let d = data();
    let mut g = c.benchmark_group("jaro_winkler_pair");
    for (label, set) in [
        ("ascii", &d.ascii),
        ("non_ascii", &d.wide),
        ("long", &d.long),
    ] {
        for (a, b) in set.iter() {
            assert_eq!(jaro_winkler(a, b), strsim::jaro_winkler(a, b), "{a} / {b}");
        }
        g.throughput(Throughput::Elements(set.len() as u64));
        g.bench_with_input(BenchmarkId::new("samekey", label), set, |bch, set| {
            bch.iter(|| {
                set.iter()
                    .map(|(a, b)| jaro_winkler(black_box(a), black_box(b)))
                    .sum::<f64>()
            })
        });
        g.bench_with_input(BenchmarkId::new("strsim", label), set, |bch, set| {
            bch.iter(|| {
                set.iter()
                    .map(|(a, b)| strsim::jaro_winkler(black_box(a), black_box(b)))
                    .sum::<f64>()
            })
        });
    }
    g.finish();
}

fn bench_jaro_winkler_one_vs_many(c: &mut Criterion) {
    let d = data();
    let queries: Vec<&String> = d.ascii.iter().step_by(100).map(|p| &p.1).collect();
    let names = &d.family;
    for q in &queries {
        let m = JaroMatcher::new(q);
        for n in names {
            assert_eq!(m.jaro_winkler(n), strsim::jaro_winkler(q, n));
        }
    }
    let mut g = c.benchmark_group("jaro_winkler_one_vs_many");
    g.throughput(Throughput::Elements((queries.len() * names.len()) as u64));
    g.bench_function("samekey_matcher", |bch| {
        bch.iter(|| {
            let mut sum = 0.0;
            for q in &queries {
                let m = JaroMatcher::new(q);
                for n in names {
                    sum += m.jaro_winkler(black_box(n));
                }
            }
            sum
        })
    });
    let texts: Vec<&str> = names.iter().map(String::as_str).collect();
    let corpus = JaroCorpus::new(&texts);
    let mut row = vec![0.0; texts.len()];
    for q in &queries {
        JaroMatcher::new(q).jaro_winkler_corpus(&corpus, &mut row);
        for (n, s) in names.iter().zip(&row) {
            assert_eq!(*s, strsim::jaro_winkler(q, n));
        }
    }
    g.bench_function("samekey_matcher_many", |bch| {
        bch.iter(|| {
            let mut sum = 0.0;
            for q in &queries {
                JaroMatcher::new(q).jaro_winkler_many(black_box(&texts), &mut row);
                sum += row.iter().sum::<f64>();
            }
            sum
        })
    });
    g.bench_function("samekey_matcher_corpus", |bch| {
        bch.iter(|| {
            let mut sum = 0.0;
            for q in &queries {
                JaroMatcher::new(q).jaro_winkler_corpus(black_box(&corpus), &mut row);
                sum += row.iter().sum::<f64>();
            }
            sum
        })
    });
    g.bench_function("samekey_free_fn", |bch| {
        bch.iter(|| {
            let mut sum = 0.0;
            for q in &queries {
                for n in names {
                    sum += jaro_winkler(q, black_box(n));
                }
            }
            sum
        })
    });
    g.bench_function("strsim", |bch| {
        bch.iter(|| {
            let mut sum = 0.0;
            for q in &queries {
                for n in names {
                    sum += strsim::jaro_winkler(q, black_box(n));
                }
            }
            sum
        })
    });
    g.finish();
}

fn bench_edit_distances(c: &mut Criterion) {
    let d = data();
    let mut g = c.benchmark_group("edit_distance_pair");
    for (label, set) in [
        ("ascii", &d.ascii),
        ("non_ascii", &d.wide),
        ("long", &d.long),
    ] {
        for (a, b) in set.iter() {
            let lev = strsim::levenshtein(a, b);
            assert_eq!(levenshtein(a, b), lev);
            assert_eq!(levenshtein_within(a, b, 2), (lev <= 2).then_some(lev));
            assert_eq!(osa_distance(a, b), strsim::osa_distance(a, b));
        }
        g.throughput(Throughput::Elements(set.len() as u64));
        g.bench_with_input(
            BenchmarkId::new("levenshtein/samekey", label),
            set,
            |bch, set| {
                bch.iter(|| {
                    set.iter()
                        .map(|(a, b)| levenshtein(black_box(a), black_box(b)))
                        .sum::<usize>()
                })
            },
        );
        g.bench_with_input(
            BenchmarkId::new("levenshtein/strsim", label),
            set,
            |bch, set| {
                bch.iter(|| {
                    set.iter()
                        .map(|(a, b)| strsim::levenshtein(black_box(a), black_box(b)))
                        .sum::<usize>()
                })
            },
        );
        g.bench_with_input(
            BenchmarkId::new("levenshtein_within_2/samekey", label),
            set,
            |bch, set| {
                bch.iter(|| {
                    set.iter()
                        .filter_map(|(a, b)| levenshtein_within(black_box(a), black_box(b), 2))
                        .sum::<usize>()
                })
            },
        );
        g.bench_with_input(BenchmarkId::new("osa/samekey", label), set, |bch, set| {
            bch.iter(|| {
                set.iter()
                    .map(|(a, b)| osa_distance(black_box(a), black_box(b)))
                    .sum::<usize>()
            })
        });
        g.bench_with_input(BenchmarkId::new("osa/strsim", label), set, |bch, set| {
            bch.iter(|| {
                set.iter()
                    .map(|(a, b)| strsim::osa_distance(black_box(a), black_box(b)))
                    .sum::<usize>()
            })
        });
    }
    g.finish();
}

fn bench_soundex(c: &mut Criterion) {
    let d = data();
    let encoder = rphonetic::Soundex::default();
    for n in &d.family {
        assert_eq!(soundex(n), encoder.encode(n));
    }
    let mut g = c.benchmark_group("soundex");
    g.throughput(Throughput::Elements(d.family.len() as u64));
    g.bench_function("samekey", |bch| {
        bch.iter(|| {
            d.family
                .iter()
                .map(|n| soundex(black_box(n)).len())
                .sum::<usize>()
        })
    });
    g.bench_function("rphonetic", |bch| {
        bch.iter(|| {
            d.family
                .iter()
                .map(|n| encoder.encode(black_box(n)).len())
                .sum::<usize>()
        })
    });
    g.finish();
}

criterion_group! {
    name = benches;
    config = config();
    targets = bench_jaro_winkler_pairs, bench_jaro_winkler_one_vs_many, bench_edit_distances,
        bench_soundex
}
criterion_main!(benches);
