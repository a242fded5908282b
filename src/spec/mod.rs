//! Linkage spec: one TOML file in, a validated [`Spec`] out.
//!
//! The spec names the sources (CSV path or database table/query, id column, column →
//! attribute mapping and per-source conventions), the comparison levels per attribute,
//! the blocking keys, the decision thresholds and the model settings. Every key is
//! documented in the README.
//!
//! Two steps: serde reads the TOML into the raw form ([`raw`]), structs that name every
//! key and keep each value as written; the resolve step checks it into the resolved
//! [`Spec`], whose parts are the types of the stages that use them
//! ([`SourceSpec`], [`CompareSpec`], [`BlockSpec`]). Every error names the key path
//! (`source[2].columns.email`), the bad value and what is allowed; the messages are
//! pinned by a snapshot test (`tests/snapshots/spec_errors.txt`).

use std::path::{Path, PathBuf};

use serde::Deserialize;

use crate::block::BlockSpec;
use crate::compare::CompareSpec;
use crate::error::{Error, Result};
use crate::record::Attr;
use crate::sources::SourceSpec;
use crate::util::stable_hash;

pub mod raw;
mod resolve;

/// The spec format version this build reads.
pub const SPEC_VERSION: i64 = 1;

/// A validated linkage spec.
#[derive(Debug, Clone)]
pub struct Spec {
    /// The spec file (for messages).
    pub file: PathBuf,
    /// The sources, in spec order.
    pub sources: Vec<SourceSpec>,
    /// Compared attributes with their agreement levels, in spec order.
    pub compares: Vec<CompareSpec>,
    /// Blocking keys, in spec order (earlier keys win when a pair is produced twice).
    pub blocks: Vec<BlockSpec>,
    /// Decision thresholds (`[decide]`).
    pub decide: DecideSpec,
    /// Model settings.
    pub model: ModelSpec,
    /// Clustering guards.
    pub cluster: ClusterSpec,
}

/// The `[cluster]` section: guards against chaining different customers together.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct ClusterSpec {
    /// Largest allowed cluster (records).
    pub max_size: Option<usize>,
    /// Indexes of sources that hold at most one record per customer.
    pub one_record_per_source: Vec<usize>,
    /// Attributes unique per person: different non-empty values never merge.
    pub unique: Vec<Attr>,
}

/// The `[decide]` section: the thresholds, stated once, as match probabilities.
///
/// A pair whose probability is at least `match_at` is a match; at least `review_at`
/// (and below `match_at`), review; below `review_at`, non_match.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DecideSpec {
    /// Probability at or above which a pair is a match.
    pub match_at: f64,
    /// Probability at or above which (and below `match_at`) a pair goes to review.
    pub review_at: f64,
}

impl Default for DecideSpec {
    fn default() -> Self {
        DecideSpec {
            match_at: 0.9,
            review_at: 0.5,
        }
    }
}

/// The `[model]` section.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ModelSpec {
    /// Seed of the random pair sample.
    pub seed: u64,
    /// Random record pairs for the u-probabilities.
    pub u_sample_pairs: usize,
    /// EM iteration limit.
    pub max_iterations: usize,
    /// Refuse a blocking key whose candidate pairs exceed this.
    pub max_pairs_per_key: u64,
}

impl Default for ModelSpec {
    fn default() -> Self {
        ModelSpec {
            seed: 1,
            u_sample_pairs: 200_000,
            max_iterations: 100,
            max_pairs_per_key: 200_000_000,
        }
    }
}

impl Spec {
    /// Read and validate a spec file.
    pub fn load(path: &Path) -> Result<Spec> {
        let text = std::fs::read_to_string(path).map_err(|e| Error::io(path, e))?;
        Spec::parse(&text, path)
    }

    /// Validate spec text; `path` is used for messages and to resolve source paths.
    pub fn parse(text: &str, path: &Path) -> Result<Spec> {
        let mut table: toml::Table = text.parse().map_err(|e: toml::de::Error| {
            Error::spec(
                path,
                "(syntax)",
                format!("not valid TOML: {}", e.message().trim()),
            )
            .with_toml_position(text, e.span())
        })?;
        raw::mark_dates(&mut table);
        // Every field of the raw form accepts any value, so this only fails on a bug.
        let raw = raw::Keyed::<raw::RawSpec>::deserialize(toml::Value::Table(table))
            .map_err(|e| Error::Internal(format!("spec raw form: {e}")))?;
        let r = resolve::Resolver {
            file: path.to_path_buf(),
        };
        r.spec(&raw, path)
    }

    /// A fingerprint of what a fitted model depends on: compared attributes and levels.
    pub fn model_fingerprint(&self) -> String {
        format!("{:016x}", stable_hash(self.model_layout().as_bytes()))
    }

    /// The text the fingerprint is computed from, one line per compared attribute.
    pub fn model_layout(&self) -> String {
        self.compares
            .iter()
            .map(|c| {
                let freq = if c.frequency {
                    " (value frequency)"
                } else {
                    ""
                };
                format!("{}: {}{freq}\n", c.attr, c.level_names().join(" | "))
            })
            .collect()
    }

    /// The source with this name.
    pub fn source_index(&self, name: &str) -> Option<usize> {
        self.sources.iter().position(|s| s.name == name)
    }
}

impl Error {
    fn with_toml_position(self, text: &str, span: Option<std::ops::Range<usize>>) -> Error {
        match (self, span) {
            (Error::Spec { file, message, .. }, Some(span)) => {
                let before = &text[..span.start.min(text.len())];
                let line = before.matches('\n').count() + 1;
                let col = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
                Error::Spec {
                    file,
                    key: format!("line {line}, column {col}"),
                    message,
                }
            }
            (e, _) => e,
        }
    }
}

#[cfg(test)]
mod error_snapshot;

#[cfg(test)]
mod tests {
    use super::*;
    use crate::block::{KeyFn, KeyPart};
    use crate::compare::Level;
    use crate::standardize::{DateOrder, NameOrder};

    /// A spec that passes validation (the one the error snapshot breaks case by case).
    use super::error_snapshot::GOOD;

    fn parse(text: &str) -> Result<Spec> {
        Spec::parse(text, Path::new("/tmp/x/spec.toml"))
    }

    fn err_of(text: &str) -> (String, String) {
        match parse(text) {
            Err(Error::Spec { key, message, .. }) => (key, message),
            other => panic!("expected a spec error, got {other:?}"),
        }
    }

    #[test]
    fn parses_a_full_spec() {
        let s = parse(GOOD).unwrap();
        assert_eq!(s.sources.len(), 2);
        assert_eq!(s.sources[0].conventions.country.as_deref(), Some("US"));
        assert_eq!(s.sources[0].conventions.date_order, DateOrder::Mdy);
        assert_eq!(s.sources[1].conventions.name_order, NameOrder::FamilyFirst);
        assert_eq!(s.sources[1].path, Path::new("/tmp/x/data/shop.csv"));
        assert_eq!(s.compares[0].levels[2], Level::JaroWinkler(0.92));
        assert!(s.compares[0].frequency);
        assert_eq!(s.compares[0].n_levels(), 4);
        assert_eq!(
            s.blocks[0].keys,
            vec![
                KeyPart {
                    func: KeyFn::Soundex,
                    attr: Attr::FamilyName
                },
                KeyPart {
                    func: KeyFn::Prefix(4),
                    attr: Attr::BirthDate
                }
            ]
        );
        assert_eq!(
            s.decide,
            DecideSpec {
                match_at: 0.95,
                review_at: 0.4
            }
        );
        assert_eq!(s.model.seed, 7);
        assert_eq!(s.model.u_sample_pairs, ModelSpec::default().u_sample_pairs);
        assert!(s.sources[1].provides(Attr::GivenName));
        assert_eq!(
            s.cluster,
            ClusterSpec {
                max_size: Some(20),
                one_record_per_source: vec![1],
                unique: vec![Attr::Email]
            }
        );
        let (k, m) = err_of(&GOOD.replace("[\"shop\"]", "[\"shops\"]"));
        assert_eq!(k, "cluster.one_record_per_source[1]");
        assert!(m.contains("crm, shop"), "{m}");
    }

    #[test]
    fn fingerprint_depends_on_levels_only() {
        let a = parse(GOOD).unwrap();
        let b = parse(&GOOD.replace("seed = 7", "seed = 8")).unwrap();
        let c = parse(&GOOD.replace("0.92", "0.9")).unwrap();
        assert_eq!(a.model_fingerprint(), b.model_fingerprint());
        assert_ne!(a.model_fingerprint(), c.model_fingerprint());
    }

    #[test]
    fn delimiters() {
        assert_eq!(parse(GOOD).unwrap().sources[0].delimiter, b',');
        let with = |d: &str| GOOD.replace("id = \"id\"", &format!("id = \"id\"\ndelimiter = {d}"));
        assert_eq!(parse(&with("\";\"")).unwrap().sources[0].delimiter, b';');
        // A TOML tab escape, and the two spellings that survive literal strings.
        assert_eq!(parse(&with("\"\\t\"")).unwrap().sources[0].delimiter, b'\t');
        assert_eq!(parse(&with("'\\t'")).unwrap().sources[0].delimiter, b'\t');
        assert_eq!(parse(&with("\"tab\"")).unwrap().sources[0].delimiter, b'\t');
        for bad in ["\";;\"", "\"\"", "\"é\"", "'\"'"] {
            let (k, m) = err_of(&with(bad));
            assert_eq!(k, "source[1].delimiter", "{bad}");
            assert!(m.contains("one ASCII character"), "{m}");
        }
    }

    #[test]
    fn encodings() {
        use crate::sources::Encoding;
        assert_eq!(parse(GOOD).unwrap().sources[0].encoding, Encoding::Utf8);
        let with =
            |e: &str| GOOD.replace("id = \"id\"", &format!("id = \"id\"\nencoding = \"{e}\""));
        assert_eq!(
            parse(&with("cp1252")).unwrap().sources[0].encoding,
            Encoding::Windows1252
        );
        assert_eq!(
            parse(&with("Latin-1")).unwrap().sources[0].encoding,
            Encoding::Latin1
        );
        let (k, m) = err_of(&with("ebcdic"));
        assert_eq!(k, "source[1].encoding");
        assert!(m.contains("`ebcdic`") && m.contains("windows-1252"), "{m}");
    }

    #[test]
    fn errors_name_the_key_and_the_choices() {
        let (k, m) = err_of(&GOOD.replace("\"mdy\"", "\"myd\""));
        assert_eq!(k, "source[1].date_order");
        assert!(m.contains("`myd`") && m.contains("ymd, dmy, mdy"), "{m}");

        let (k, m) = err_of(&GOOD.replace("full_name = \"name\"", "fullname = \"name\""));
        assert_eq!(k, "source[2].columns.fullname");
        assert!(m.contains("given_name"), "{m}");

        let (k, m) = err_of(&GOOD.replace("\"translit\"", "\"translit\", \"jw >= 2\""));
        assert_eq!(k, "compare[1].levels[3]");
        assert!(m.contains("jaro_winkler"), "{m}");

        let (k, m) = err_of(&GOOD.replace("jaro_winkler >= 0.92", "jaro_winkler >= 1.5"));
        assert_eq!(k, "compare[1].levels[3]");
        assert!(m.contains("between 0 and 1"), "{m}");

        let (k, _) = err_of(&GOOD.replace("prefix(birth_date, 4)", "prefix(birth_date)"));
        assert_eq!(k, "block[1].keys[2]");

        let (k, m) = err_of(&GOOD.replace("review_at = 0.4", "review_at = 0.99"));
        assert_eq!(k, "decide.review_at");
        assert!(m.contains("0.99"), "{m}");
        let (k, m) = err_of(&GOOD.replace("match_at = 0.95", "match_at = 1.5"));
        assert_eq!(k, "decide.match_at");
        assert!(m.contains("between 0 and 1"), "{m}");

        // The section's old name is refused with the new one in the message.
        let (k, m) = err_of(&GOOD.replace("[decide]", "[classify]"));
        assert_eq!(k, "classify");
        assert!(m.contains("[decide]") && m.contains("match_at"), "{m}");

        let (k, m) = err_of(&GOOD.replace("match_at = 0.95", "match_bits = 12"));
        assert_eq!(k, "decide.match_bits");
        assert!(m.contains("match_at"), "{m}");

        let (k, m) = err_of(&GOOD.replace("version = 1", "version = 9"));
        assert_eq!(k, "version");
        assert!(m.contains("version = 1"), "{m}");

        let (k, m) = err_of(&GOOD.replace("[model]", "[model]\nsed = 3"));
        assert_eq!(k, "model.sed");
        assert!(m.contains("seed"), "{m}");
    }

    #[test]
    fn duplicates_and_empty_lists_are_named() {
        let twice = GOOD.replace("attribute = \"birth_date\"", "attribute = \"family_name\"");
        let (k, m) = err_of(&twice.replace("\"date_swap\", \"same_year\"", "\"translit\""));
        assert_eq!(k, "compare[2].attribute");
        assert!(m.contains("`family_name` is compared twice"), "{m}");
        let (k, m) = err_of(&GOOD.replace("name = \"shop\"", "name = \"crm\""));
        assert_eq!(k, "source[2].name");
        assert!(m.contains("two sources"), "{m}");
        let start = GOOD.find("[[block]]").unwrap();
        let end = GOOD.find("[decide]").unwrap();
        let (k, m) = err_of(&format!("{}{}", &GOOD[..start], &GOOD[end..]));
        assert_eq!(k, "block");
        assert!(m.contains("at least one [[block]]"), "{m}");
    }

    #[test]
    fn frequency_needs_the_exact_level() {
        let (k, m) = err_of(&GOOD.replace(
            "levels = [\"exact\", \"translit\", \"jaro_winkler >= 0.92\"]",
            "levels = [\"translit\"]",
        ));
        assert_eq!(k, "compare[1].frequency");
        assert!(m.contains("exact"), "{m}");
    }

    #[test]
    fn date_levels_only_on_dates() {
        let (k, m) = err_of(&GOOD.replace("\"translit\", ", "\"date_swap\", "));
        assert_eq!(k, "compare[1].levels[2]");
        assert!(m.contains("birth_date"), "{m}");
    }

    #[test]
    fn syntax_errors_carry_line_and_column() {
        let (k, m) = err_of("version = 1\n[[source]\nname = 1\n");
        assert!(k.starts_with("line 2"), "{k}");
        assert!(m.contains("TOML"), "{m}");
    }

    #[test]
    fn keys_need_a_providing_source() {
        let (k, m) = err_of(&GOOD.replace("soundex(family_name)", "soundex(city)"));
        assert_eq!(k, "block[1].keys");
        assert!(m.contains("city"), "{m}");
    }

    #[test]
    fn mixed_names_swapped_levels_and_any_order_keys() {
        let text = r#"
version = 1
[[source]]
name = "desk"
path = "d.csv"
id = "id"
name_order = "mixed"
[source.columns]
full_name = "name"
phone = "phone"
[[compare]]
attribute = "given_name"
levels = ["exact", "subset", "swapped"]
[[compare]]
attribute = "phone"
levels = ["verified", "exact", "national_number"]
[[block]]
name = "names"
keys = ["soundex(given_name)", "soundex(family_name)"]
any_order = true
"#;
        let spec = Spec::parse(text, Path::new("spec.toml")).unwrap();
        assert_eq!(spec.sources[0].conventions.name_order, NameOrder::Mixed);
        assert!(spec.blocks[0].any_order);
        let err = |t: &str| match Spec::parse(t, Path::new("spec.toml")) {
            Err(e) => e.to_string(),
            Ok(_) => panic!("expected an error"),
        };
        let bad = text.replace(r#""exact", "subset", "swapped""#, r#""verified""#);
        assert!(err(&bad).contains("only applies to phone"), "{}", err(&bad));
        let bad = text.replace("any_order = true", "any_order = 1");
        assert!(err(&bad).contains("true or false"), "{}", err(&bad));
        let bad = text.replace(
            r#"["soundex(given_name)", "soundex(family_name)"]"#,
            r#"["soundex(given_name)"]"#,
        );
        assert!(
            err(&bad).contains("at least two key parts"),
            "{}",
            err(&bad)
        );
    }
}
