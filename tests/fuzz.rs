//! Fuzzing on the stable toolchain: arbitrary and mutated inputs for the CSV reader, the
//! spec loader, the model loader and each standardizer (names, e-mail, phone, address,
//! dates). Each target must not panic, must not hang (every input finishes within
//! [`MAX_PER_INPUT`] of CPU time) and must keep memory bounded (peak resident memory of the process
//! under [`MAX_PEAK_MIB`]).
//!
//! A failing input is kept in `target/fuzz-failures/`; `SAMEKEY_FUZZ_REPLAY=<file>` runs
//! it first (for the target named at the start of the file name).
//!
//! Inputs come from a seeded generator: random bytes, and seed inputs mutated by byte
//! flips, insertions of tokens that break parsers (quotes, delimiters, line ends, NUL,
//! long runs, non-ASCII letters, numbers at the edges), deletions, duplications and
//! splices. `SAMEKEY_FUZZ_SECONDS` sets the time per target (default 2: the smoke run of
//! `cargo test`); `SAMEKEY_FUZZ_SEED` the seed. Each target prints its input count.
//! `bench/fuzz.sh` runs each target for ten minutes, one after the other.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::Path;
use std::time::{Duration, Instant};

use samekey::record::{Attr, StdRecord};
use samekey::standardize::{self, Conventions, DateOrder, NameOrder, StdStats};

/// Longest CPU time one input may take (CPU time of the thread, so that a busy machine
/// does not count as a slow input).
const MAX_PER_INPUT: Duration = Duration::from_secs(5);
/// Longest wall-clock time one input may take before the watchdog calls it a hang.
const HANG: Duration = Duration::from_secs(120);
/// Largest peak resident memory of the test process, MiB.
const MAX_PEAK_MIB: u64 = 2048;

struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        // SplitMix64 (Steele, Lea, Flood: "Fast splittable pseudorandom number
        // generators", 2014).
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }
    fn below(&mut self, n: usize) -> usize {
        (self.next() % n.max(1) as u64) as usize
    }
}

/// Tokens that tend to break parsers.
const TOKENS: &[&str] = &[
    "\"",
    "\"\"",
    ",",
    ";",
    "\t",
    "\n",
    "\r\n",
    "\r",
    "\0",
    "=",
    "[",
    "]",
    "[[",
    "]]",
    "{",
    "}",
    "#",
    "'",
    "\\",
    "-",
    "+",
    ".",
    "@",
    "@@",
    "0",
    "-1",
    "1e308",
    "NaN",
    "inf",
    "-0",
    "99999999999999999999",
    "0.0000001",
    "1.5",
    "ß",
    "İ",
    "ǅ",
    "ﬁ",
    "é",
    "e\u{301}",
    "Ö",
    "Я",
    "東京",
    "🙂",
    "\u{200b}",
    "\u{feff}",
    "\u{fffd}",
    "        ",
    "ab",
    "O'",
    "Mc",
    "van der",
    "+49",
    "+1 (555)",
    "00",
    "ext. 5",
    "x",
    "Str.",
    "Apt 5",
    "#12",
    "12/31/1999",
    "31.12.1999",
    "1999-02-29",
    "2000-02-29",
    "0000-00-00",
    "29/02",
    "19990231",
    "%",
    "%%",
    "ö@ö.de",
];

/// A new input from `seeds`: random bytes or a mutated seed.
fn input(rng: &mut Rng, seeds: &[Vec<u8>]) -> Vec<u8> {
    if rng.below(10) == 0 {
        let n = rng.below(200);
        return (0..n).map(|_| rng.next() as u8).collect();
    }
    let mut v = seeds[rng.below(seeds.len())].clone();
    for _ in 0..1 + rng.below(8) {
        let at = rng.below(v.len() + 1);
        match rng.below(8) {
            0 => {
                if !v.is_empty() {
                    let i = rng.below(v.len());
                    v[i] ^= 1 << rng.below(8);
                }
            }
            1 | 2 => {
                let t = TOKENS[rng.below(TOKENS.len())].as_bytes();
                v.splice(at..at, t.iter().copied());
            }
            3 => {
                let end = (at + rng.below(16)).min(v.len());
                v.drain(at..end);
            }
            4 => {
                // A long run: length limits and quadratic paths.
                let t = TOKENS[rng.below(TOKENS.len())].as_bytes();
                let n = 1 + rng.below(2000);
                let run: Vec<u8> = t.iter().copied().cycle().take(t.len() * n).collect();
                v.splice(at..at, run);
            }
            5 => {
                // Duplicate a slice.
                let end = (at + rng.below(64)).min(v.len());
                let s = v[at..end].to_vec();
                v.splice(at..at, s);
            }
            6 => {
                // Splice in part of another seed.
                let o = &seeds[rng.below(seeds.len())];
                let from = rng.below(o.len() + 1);
                let end = (from + rng.below(64)).min(o.len());
                v.splice(at..at, o[from..end].iter().copied());
            }
            _ => v.truncate(at),
        }
    }
    v
}

fn seconds() -> u64 {
    std::env::var("SAMEKEY_FUZZ_SECONDS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(2)
}

/// Peak resident memory of this process in MiB (Linux; 0 elsewhere).
fn peak_mib() -> u64 {
    std::fs::read_to_string("/proc/self/status")
        .ok()
        .and_then(|s| {
            s.lines()
                .find(|l| l.starts_with("VmHWM:"))
                .and_then(|l| l.split_whitespace().nth(1)?.parse::<u64>().ok())
        })
        .map_or(0, |kb| kb / 1024)
}

/// Write a failing input to `target/fuzz-failures/<target>-<hash>.bin` and return the
/// path.
fn keep_failure(name: &str, data: &[u8]) -> String {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("target/fuzz-failures");
    let _ = std::fs::create_dir_all(&dir);
    let path = dir.join(format!(
        "{name}-{:016x}.bin",
        samekey::util::stable_hash(data)
    ));
    let _ = std::fs::write(&path, data);
    path.display().to_string()
}

/// The start of an input, for a failure message.
fn shown(data: &[u8]) -> String {
    let t = String::from_utf8_lossy(&data[..data.len().min(200)]).into_owned();
    format!("{} bytes, starting {t:?}", data.len())
}

/// Ends the process, keeping the input, when one input runs longer than [`HANG`]: a hang
/// never returns to the loop that would time it.
struct Watchdog {
    current: std::sync::Arc<std::sync::Mutex<(Instant, Vec<u8>)>>,
    done: std::sync::Arc<std::sync::atomic::AtomicBool>,
}

impl Watchdog {
    fn start(name: &str) -> Watchdog {
        use std::sync::atomic::Ordering;
        let current = std::sync::Arc::new(std::sync::Mutex::new((Instant::now(), Vec::new())));
        let done = std::sync::Arc::new(std::sync::atomic::AtomicBool::new(false));
        let (c, d, name) = (current.clone(), done.clone(), name.to_owned());
        std::thread::spawn(move || {
            while !d.load(Ordering::Relaxed) {
                std::thread::sleep(Duration::from_millis(500));
                let (since, data) = &*c.lock().unwrap_or_else(|e| e.into_inner());
                if since.elapsed() > HANG {
                    let kept = keep_failure(&name, data);
                    eprintln!(
                        "fuzz {name}: hang, no answer after {:?} on an input of {} bytes \
                         (kept in {kept}; replay with SAMEKEY_FUZZ_REPLAY={kept})",
                        since.elapsed(),
                        data.len()
                    );
                    std::process::abort();
                }
            }
        });
        Watchdog { current, done }
    }

    /// The input now being run.
    fn set(&self, data: &[u8]) {
        let mut cur = self.current.lock().unwrap_or_else(|e| e.into_inner());
        cur.0 = Instant::now();
        cur.1.clear();
        cur.1.extend_from_slice(data);
    }
}

impl Drop for Watchdog {
    fn drop(&mut self) {
        self.done.store(true, std::sync::atomic::Ordering::Relaxed);
    }
}

/// Run `target` on generated inputs for the configured time; fail on a panic, a slow
/// input or too much memory, printing the input that did it.
fn fuzz(name: &str, seeds: &[&[u8]], mut target: impl FnMut(&[u8])) {
    let seed = std::env::var("SAMEKEY_FUZZ_SEED")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(0x5eed_u64 ^ samekey::util::stable_hash(name.as_bytes()));
    let mut rng = Rng(seed);
    let seeds: Vec<Vec<u8>> = seeds.iter().map(|s| s.to_vec()).collect();
    let budget = Duration::from_secs(seconds());
    let started = Instant::now();
    let mut count = 0u64;
    let watch = Watchdog::start(name);
    // Seeds first (and a kept failure to replay), then generated inputs.
    let mut queue: Vec<Vec<u8>> = seeds.clone();
    if let Ok(replay) = std::env::var("SAMEKEY_FUZZ_REPLAY") {
        if Path::new(&replay)
            .file_name()
            .is_some_and(|f| f.to_string_lossy().starts_with(&format!("{name}-")))
        {
            queue.push(std::fs::read(&replay).unwrap());
        }
    }
    while started.elapsed() < budget || !queue.is_empty() {
        let data = queue.pop().unwrap_or_else(|| input(&mut rng, &seeds));
        watch.set(&data);
        let (r, took) =
            samekey::util::cpu::thread_cpu(|| catch_unwind(AssertUnwindSafe(|| target(&data))));
        count += 1;
        if r.is_err() {
            let kept = keep_failure(name, &data);
            panic!(
                "fuzz {name}: panic on input {} (kept in {kept}; replay with \
                 SAMEKEY_FUZZ_REPLAY={kept})",
                shown(&data)
            );
        }
        if took >= MAX_PER_INPUT {
            let kept = keep_failure(name, &data);
            panic!(
                "fuzz {name}: {took:?} of CPU on input {} (kept in {kept}; replay with \
                 SAMEKEY_FUZZ_REPLAY={kept})",
                shown(&data)
            );
        }
    }
    let peak = peak_mib();
    assert!(peak < MAX_PEAK_MIB, "fuzz {name}: peak memory {peak} MiB");
    println!(
        "fuzz {name}: {count} inputs in {:.0} s, peak memory {peak} MiB, no panic",
        started.elapsed().as_secs_f64()
    );
}

fn text(data: &[u8]) -> String {
    String::from_utf8_lossy(data).into_owned()
}

/// Conventions chosen by the input's first byte, so every combination gets its turn.
fn conventions(data: &[u8]) -> Conventions {
    let b = data.first().copied().unwrap_or(0) as usize;
    const COUNTRIES: &[Option<&str>] = &[
        None,
        Some("US"),
        Some("DE"),
        Some("GB"),
        Some("FR"),
        Some("JP"),
        Some("BR"),
        Some("IN"),
        Some("XX"),
    ];
    Conventions {
        country: COUNTRIES[b % COUNTRIES.len()].map(String::from),
        date_order: [DateOrder::Ymd, DateOrder::Dmy, DateOrder::Mdy][b / 16 % 3],
        name_order: [NameOrder::GivenFirst, NameOrder::FamilyFirst][b / 64 % 2],
        ..Default::default()
    }
}

/// Standardize a record holding `value` in each of `attrs`.
fn standardize_attrs(attrs: &[Attr], data: &[u8]) {
    let value = text(data.get(1..).unwrap_or_default());
    let mut raw = StdRecord::default();
    for &a in attrs {
        raw.set(a, Some(value.clone()));
    }
    let mut stats = StdStats::default();
    let out = standardize::standardize(&raw, &conventions(data), &mut stats);
    // Standardized values are never longer than a sane bound of their input.
    for a in Attr::ALL {
        if let Some(v) = out.get(a) {
            assert!(v.len() <= value.len() * 4 + 64, "{a:?} grew: {v:?}");
        }
    }
}

#[test]
fn fuzz_names() {
    fuzz(
        "names",
        &[
            b"\x00Anna Maria van der Berg",
            b"\x41Berg, Anna-Maria",
            b"\x80DUPONT Jean-Pierre",
            b"\x10Dr. John R. R. Smith Jr.",
            "\x05María José García Ortega".as_bytes(),
            "\x07Ивана Петрова".as_bytes(),
            b"\x09O'Neil",
        ],
        |d| {
            standardize_attrs(&[Attr::FullName], d);
            standardize_attrs(&[Attr::GivenName, Attr::FamilyName], d);
            standardize_attrs(&[Attr::Company], d);
        },
    );
}

#[test]
fn fuzz_email() {
    fuzz(
        "email",
        &[
            b"\x00anna.berg@example.com",
            b"\x01 Anna.Berg+shop@GMAIL.com ",
            b"\x02\"quoted local\"@example.org",
            "\x03jürgen@bücher.de".as_bytes(),
            b"\x04a@b",
            b"\x05mailto:x@y.z",
        ],
        |d| standardize_attrs(&[Attr::Email], d),
    );
}

#[test]
fn fuzz_phone() {
    fuzz(
        "phone",
        &[
            b"\x01(555) 123-4567",
            b"\x02+49 30 1234567",
            b"\x0306 12 34 56 78",
            b"\x04+44 (0)20 7946 0958 ext. 12",
            b"\x0000 33 1 23 45 67 89",
            b"\x05tel:+81-3-1234-5678",
            b"\x08+999 12345678901234567890",
        ],
        |d| standardize_attrs(&[Attr::Phone, Attr::PhoneType], d),
    );
}

#[test]
fn fuzz_address() {
    fuzz(
        "address",
        &[
            b"\x0112 Main Street Apt 5",
            b"\x02Hauptstr. 5a",
            b"\x03Flat 2, 10 Downing St",
            b"\x04SW1A 1AA",
            b"\x0510115",
            "\x06Rue de l'Église 3 bis".as_bytes(),
            b"\x00New York",
            b"\x08Bavaria",
        ],
        |d| {
            standardize_attrs(
                &[
                    Attr::Street,
                    Attr::HouseNumber,
                    Attr::Unit,
                    Attr::Postcode,
                    Attr::City,
                    Attr::Region,
                    Attr::Country,
                ],
                d,
            )
        },
    );
}

#[test]
fn fuzz_dates() {
    fuzz(
        "dates",
        &[
            b"\x001999-12-31",
            b"\x1031.12.1999",
            b"\x2012/31/1999",
            b"\x0019991231",
            b"\x10 3 Mar 1985",
            b"\x20Feb 29, 2000",
            b"\x00-0001-01-01",
        ],
        |d| standardize_attrs(&[Attr::BirthDate], d),
    );
}

/// A folder with a spec that reads `crm.csv`; the CSV target rewrites that file.
fn csv_setup() -> (tempfile::TempDir, samekey::spec::Spec) {
    let dir = tempfile::tempdir().unwrap();
    let spec = r#"version = 1
[[source]]
name = "crm"
path = "crm.csv"
id = "id"
country = "US"
[source.columns]
given_name = "first"
family_name = "last"
email = "email"
birth_date = "dob"
[[compare]]
attribute = "family_name"
levels = ["exact"]
[[block]]
name = "email"
keys = ["email"]
"#;
    std::fs::write(dir.path().join("spec.toml"), spec).unwrap();
    std::fs::write(dir.path().join("crm.csv"), "id,first,last,email,dob\n").unwrap();
    let s = samekey::spec::Spec::load(&dir.path().join("spec.toml")).unwrap();
    (dir, s)
}

#[test]
fn fuzz_csv_reading() {
    let (dir, spec) = csv_setup();
    let path = dir.path().join("crm.csv");
    fuzz(
        "csv",
        &[
            b"id,first,last,email,dob\nc1,Anna,Berg,anna@example.com,1990-01-02\nc2,\"Berg, A\",x,,\n",
            b"\xef\xbb\xbfid,first,last,email,dob\r\nc1,A,B,a@b.c,01/02/1990\r\n",
            b"id,first,last,email,dob\nc1,\"unclosed,B,,\nc2,C,D,,\nc3,E,F,,\n",
            b"id,first,last,email,dob,first\nc1,A,B,,,\n",
            b"id;first;last;email;dob\nc1;A;B;;\n",
        ],
        |d| {
            std::fs::write(&path, d).unwrap();
            // Bad input is an error value, never a panic.
            let _ = samekey::sources::load(&spec.sources);
        },
    );
}

#[test]
fn fuzz_spec_loading() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("spec.toml");
    let demo =
        std::fs::read(Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/spec.toml")).unwrap();
    let mini =
        std::fs::read(Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/mini/spec.toml"))
            .unwrap();
    fuzz("spec", &[&demo, &mini], |d| {
        std::fs::write(&path, d).unwrap();
        let _ = samekey::spec::Spec::load(&path);
    });
}

#[test]
fn fuzz_model_loading() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let spec = samekey::spec::Spec::load(&root.join("demo-data/spec.toml")).unwrap();
    let model = std::fs::read(root.join("models/demo.toml")).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("model.toml");
    fuzz("model", &[&model], |d| {
        std::fs::write(&path, d).unwrap();
        if let Ok(m) = samekey::model::Model::load(&path, &spec) {
            // A model that loads is one the scorer can index without panicking.
            assert_eq!(m.attribute.len(), spec.compares.len());
            assert!(m.lambda > 0.0 && m.lambda < 1.0);
        }
    });
}
