//! Linkage spec: one TOML file in, a validated [`Spec`] out.
//!
//! The spec names the sources (CSV path, id column, column → attribute mapping and
//! per-source conventions), the comparison levels per attribute, the blocking keys, the
//! decision thresholds and the model settings. Every key is documented in the
//! README. Validation walks the parsed TOML by hand so that every error names the key
//! path (`source[2].columns.email`), the bad value and what is allowed.

use std::fmt;
use std::path::{Path, PathBuf};

use toml::{Table, Value};

use crate::error::{Error, Result};
use crate::record::Attr;
use crate::standardize::{Conventions, DateOrder, NameOrder};
use crate::util::stable_hash;

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

/// One source system.
#[derive(Debug, Clone)]
pub struct SourceSpec {
    /// Short name, written to the crosswalk's `source` column.
    pub name: String,
    /// CSV path, resolved against the spec's folder.
    pub path: PathBuf,
    /// Header of the id column.
    pub id_column: String,
    /// Field delimiter of the CSV file (`,` unless the spec says otherwise).
    pub delimiter: u8,
    /// Character encoding of the CSV file (UTF-8 unless the spec says otherwise).
    pub encoding: crate::sources::Encoding,
    /// Country, date order and name order of the source.
    pub conventions: Conventions,
    /// Standard attribute → CSV header.
    pub columns: Vec<(Attr, String)>,
}

/// An agreement level of a comparison, best first.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Level {
    /// Standardized values are equal.
    Exact,
    /// Equal after transliteration (ü = ue = u, ß = ss, é = e).
    Translit,
    /// Nickname or diminutive of each other (Bill = William).
    Nickname,
    /// One value is an initial of the other (J = John).
    Initial,
    /// Same American Soundex code.
    Soundex,
    /// E-mail addresses with the same local part on another domain.
    LocalPart,
    /// The values share a word (double family names, company names).
    AnyToken,
    /// Symmetric Monge–Elkan similarity over words (Jaro–Winkler inside) at least x.
    MongeElkan(f64),
    /// Jaro–Winkler similarity at least the threshold.
    JaroWinkler(f64),
    /// Jaro similarity at least the threshold.
    Jaro(f64),
    /// Levenshtein distance at most the bound.
    Levenshtein(u32),
    /// Dates equal after swapping day and month.
    DateSwap,
    /// Dates differ in exactly one digit.
    DateOneDigit,
    /// Dates share the year.
    SameYear,
}

impl fmt::Display for Level {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Level::Exact => f.write_str("exact"),
            Level::Translit => f.write_str("translit"),
            Level::Nickname => f.write_str("nickname"),
            Level::Initial => f.write_str("initial"),
            Level::Soundex => f.write_str("soundex"),
            Level::LocalPart => f.write_str("local_part"),
            Level::AnyToken => f.write_str("any_token"),
            Level::MongeElkan(t) => write!(f, "monge_elkan >= {t}"),
            Level::JaroWinkler(t) => write!(f, "jaro_winkler >= {t}"),
            Level::Jaro(t) => write!(f, "jaro >= {t}"),
            Level::Levenshtein(k) => write!(f, "levenshtein <= {k}"),
            Level::DateSwap => f.write_str("date_swap"),
            Level::DateOneDigit => f.write_str("date_one_digit"),
            Level::SameYear => f.write_str("same_year"),
        }
    }
}

const LEVEL_HELP: &str = "exact, translit, nickname, initial, soundex, local_part, any_token, \
     \"jaro_winkler >= 0.9\", \"jaro >= 0.9\", \"monge_elkan >= 0.9\", \"levenshtein <= 2\", \
     date_swap, date_one_digit, same_year";

impl Level {
    /// Parse a level as written in the spec.
    pub fn parse(s: &str) -> std::result::Result<Level, String> {
        let t = s.trim();
        let simple = match t {
            "exact" => Some(Level::Exact),
            "translit" => Some(Level::Translit),
            "nickname" => Some(Level::Nickname),
            "initial" => Some(Level::Initial),
            "soundex" => Some(Level::Soundex),
            "local_part" => Some(Level::LocalPart),
            "any_token" => Some(Level::AnyToken),
            "date_swap" => Some(Level::DateSwap),
            "date_one_digit" => Some(Level::DateOneDigit),
            "same_year" => Some(Level::SameYear),
            _ => None,
        };
        if let Some(l) = simple {
            return Ok(l);
        }
        let bad = || format!("`{t}` is not a level; allowed: {LEVEL_HELP}");
        if let Some((name, rest)) = t.split_once(">=") {
            let make: fn(f64) -> Level = match name.trim() {
                "jaro_winkler" => Level::JaroWinkler,
                "jaro" => Level::Jaro,
                "monge_elkan" => Level::MongeElkan,
                _ => return Err(bad()),
            };
            let x: f64 = rest.trim().parse().map_err(|_| bad())?;
            if !(0.0..=1.0).contains(&x) {
                return Err(format!("`{t}`: the threshold must be between 0 and 1"));
            }
            return Ok(make(x));
        }
        if let Some((name, rest)) = t.split_once("<=") {
            let k: u32 = rest.trim().parse().map_err(|_| bad())?;
            return match name.trim() {
                "levenshtein" if (1..=8).contains(&k) => Ok(Level::Levenshtein(k)),
                "levenshtein" => Err(format!("`{t}`: the bound must be between 1 and 8")),
                _ => Err(bad()),
            };
        }
        Err(bad())
    }

    /// True for levels that only make sense on dates.
    pub fn is_date_level(self) -> bool {
        matches!(
            self,
            Level::DateSwap | Level::DateOneDigit | Level::SameYear
        )
    }
}

/// One compared attribute.
#[derive(Debug, Clone)]
pub struct CompareSpec {
    /// The attribute.
    pub attr: Attr,
    /// Agreement levels, best first; "disagree" and "missing" follow implicitly.
    pub levels: Vec<Level>,
    /// Use value-frequency weights for the exact level.
    pub frequency: bool,
}

impl CompareSpec {
    /// Names of all levels including the implicit `disagree` (missing is not a level).
    pub fn level_names(&self) -> Vec<String> {
        let mut v: Vec<String> = self.levels.iter().map(|l| l.to_string()).collect();
        v.push("disagree".to_string());
        v
    }

    /// Number of levels including `disagree`.
    pub fn n_levels(&self) -> usize {
        self.levels.len() + 1
    }
}

/// A function applied to an attribute to make part of a blocking key.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum KeyFn {
    /// The standardized value itself.
    Value,
    /// American Soundex of the folded value.
    Soundex,
    /// The first `n` characters of the folded value (spaces removed).
    Prefix(usize),
    /// The first letter of the folded value.
    Initial,
    /// The year of a date.
    Year,
}

/// One part of a blocking key.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct KeyPart {
    /// The function.
    pub func: KeyFn,
    /// The attribute it is applied to.
    pub attr: Attr,
}

impl fmt::Display for KeyPart {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.func {
            KeyFn::Value => write!(f, "{}", self.attr),
            KeyFn::Soundex => write!(f, "soundex({})", self.attr),
            KeyFn::Prefix(n) => write!(f, "prefix({}, {n})", self.attr),
            KeyFn::Initial => write!(f, "initial({})", self.attr),
            KeyFn::Year => write!(f, "year({})", self.attr),
        }
    }
}

const KEY_HELP: &str =
    "an attribute name, soundex(attr), prefix(attr, n), initial(attr), year(attr)";

impl KeyPart {
    /// Parse a key part as written in the spec.
    pub fn parse(s: &str) -> std::result::Result<KeyPart, String> {
        let t = s.trim();
        let attr_of = |name: &str| {
            Attr::from_name(name.trim()).ok_or_else(|| {
                format!(
                    "`{}` is not an attribute; allowed: {}",
                    name.trim(),
                    Attr::all_names()
                )
            })
        };
        let Some(open) = t.find('(') else {
            return Ok(KeyPart {
                func: KeyFn::Value,
                attr: attr_of(t)?,
            });
        };
        let Some(inner) = t[open + 1..].strip_suffix(')') else {
            return Err(format!("`{t}`: missing `)`; allowed: {KEY_HELP}"));
        };
        let func = t[..open].trim();
        let args: Vec<&str> = inner.split(',').map(str::trim).collect();
        match (func, args.as_slice()) {
            ("soundex", [a]) => Ok(KeyPart {
                func: KeyFn::Soundex,
                attr: attr_of(a)?,
            }),
            ("initial", [a]) => Ok(KeyPart {
                func: KeyFn::Initial,
                attr: attr_of(a)?,
            }),
            ("year", [a]) => Ok(KeyPart {
                func: KeyFn::Year,
                attr: attr_of(a)?,
            }),
            ("prefix", [a, n]) => {
                let n: usize = n
                    .parse()
                    .ok()
                    .filter(|n| (1..=32).contains(n))
                    .ok_or_else(|| format!("`{t}`: the length must be a number from 1 to 32"))?;
                Ok(KeyPart {
                    func: KeyFn::Prefix(n),
                    attr: attr_of(a)?,
                })
            }
            _ => Err(format!("`{t}` is not a key function; allowed: {KEY_HELP}")),
        }
    }
}

/// One blocking key: records agreeing on all parts become candidate pairs.
#[derive(Debug, Clone)]
pub struct BlockSpec {
    /// Name used in the summary and in errors.
    pub name: String,
    /// Key parts; all must be present for a record to be blocked on this key.
    pub keys: Vec<KeyPart>,
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
        let table: Table = text.parse().map_err(|e: toml::de::Error| {
            Error::spec(
                path,
                "(syntax)",
                format!("not valid TOML: {}", e.message().trim()),
            )
            .with_toml_position(text, e.span())
        })?;
        let w = Walker {
            file: path.to_path_buf(),
        };
        w.spec(&table, path)
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

/// Walks the TOML table, building typed values and key-path errors.
struct Walker {
    file: PathBuf,
}

fn type_name(v: &Value) -> &'static str {
    match v {
        Value::String(_) => "a string",
        Value::Integer(_) => "an integer",
        Value::Float(_) => "a number",
        Value::Boolean(_) => "a boolean",
        Value::Datetime(_) => "a date",
        Value::Array(_) => "a list",
        Value::Table(_) => "a table",
    }
}

impl Walker {
    fn err(&self, key: impl Into<String>, msg: impl Into<String>) -> Error {
        Error::spec(&self.file, key, msg)
    }

    fn check_keys(&self, t: &Table, at: &str, allowed: &[&str]) -> Result<()> {
        for k in t.keys() {
            if !allowed.contains(&k.as_str()) {
                let key = if at.is_empty() {
                    k.clone()
                } else {
                    format!("{at}.{k}")
                };
                return Err(self.err(
                    key,
                    format!("unknown key; allowed here: {}", allowed.join(", ")),
                ));
            }
        }
        Ok(())
    }

    fn string<'a>(&self, t: &'a Table, at: &str, k: &str) -> Result<Option<&'a str>> {
        match t.get(k) {
            None => Ok(None),
            Some(Value::String(s)) => Ok(Some(s.as_str())),
            Some(v) => Err(self.err(
                join(at, k),
                format!("expected a string, found {}", type_name(v)),
            )),
        }
    }

    fn req_string<'a>(&self, t: &'a Table, at: &str, k: &str) -> Result<&'a str> {
        match self.string(t, at, k)? {
            Some(s) if !s.trim().is_empty() => Ok(s),
            Some(_) => Err(self.err(join(at, k), "must not be empty")),
            None => Err(self.err(join(at, k), "is required")),
        }
    }

    fn number(&self, t: &Table, at: &str, k: &str) -> Result<Option<f64>> {
        match t.get(k) {
            None => Ok(None),
            Some(Value::Float(x)) => Ok(Some(*x)),
            Some(Value::Integer(i)) => Ok(Some(*i as f64)),
            Some(v) => Err(self.err(
                join(at, k),
                format!("expected a number, found {}", type_name(v)),
            )),
        }
    }

    fn integer(&self, t: &Table, at: &str, k: &str, min: i64) -> Result<Option<i64>> {
        match t.get(k) {
            None => Ok(None),
            Some(Value::Integer(i)) if *i >= min => Ok(Some(*i)),
            Some(Value::Integer(i)) => Err(self.err(
                join(at, k),
                format!("`{i}` is too small; use at least {min}"),
            )),
            Some(v) => Err(self.err(
                join(at, k),
                format!("expected a whole number, found {}", type_name(v)),
            )),
        }
    }

    fn tables<'a>(&self, t: &'a Table, k: &str) -> Result<Vec<&'a Table>> {
        match t.get(k) {
            None => Ok(Vec::new()),
            Some(Value::Array(items)) => items
                .iter()
                .enumerate()
                .map(|(i, v)| match v {
                    Value::Table(t) => Ok(t),
                    other => Err(self.err(
                        format!("{k}[{}]", i + 1),
                        format!("expected a table ([[{k}]]), found {}", type_name(other)),
                    )),
                })
                .collect(),
            Some(v) => Err(self.err(
                k,
                format!(
                    "expected a list of tables written [[{k}]], found {}",
                    type_name(v)
                ),
            )),
        }
    }

    fn spec(&self, t: &Table, path: &Path) -> Result<Spec> {
        self.check_keys(
            t,
            "",
            &[
                "version", "source", "compare", "block", "decide", "classify", "model", "cluster",
            ],
        )?;
        match t.get("version") {
            Some(Value::Integer(SPEC_VERSION)) => {}
            Some(v) => {
                return Err(self.err(
                    "version",
                    format!("`{v}` is not supported; this build reads version = {SPEC_VERSION}"),
                ))
            }
            None => {
                return Err(self.err(
                    "version",
                    format!("is required; write version = {SPEC_VERSION}"),
                ))
            }
        }
        let dir = path.parent().map(Path::to_path_buf).unwrap_or_default();
        let sources = self.unique_list(
            t,
            "source",
            "name",
            |w, s, at| w.source(s, at, &dir),
            |s| s.name.clone(),
            "is used by two sources; names must be unique",
        )?;
        let compares = self.unique_list(
            t,
            "compare",
            "attribute",
            |w, c, at| w.compare(c, at),
            |c| c.attr.to_string(),
            "is compared twice; merge the two entries",
        )?;
        let blocks = self.unique_list(
            t,
            "block",
            "name",
            |w, b, at| w.block(b, at),
            |b| b.name.clone(),
            "is used by two blocking keys; names must be unique",
        )?;
        for (i, b) in blocks.iter().enumerate() {
            for k in &b.keys {
                if !sources.iter().any(|s| s.provides(k.attr)) {
                    return Err(self.err(
                        format!("block[{}].keys", i + 1),
                        format!(
                            "no source provides `{}`; map a column to it or drop the key",
                            k.attr
                        ),
                    ));
                }
            }
        }
        let decide = self.decide(t)?;
        let model = self.model(t)?;
        let cluster = self.cluster(t, &sources)?;
        Ok(Spec {
            file: self.file.clone(),
            sources,
            compares,
            blocks,
            decide,
            model,
            cluster,
        })
    }

    /// The strings of the list at `at.k`, each with its key path; `help` says what the
    /// list holds when it is missing or not a list.
    fn string_items<'a>(
        &self,
        t: &'a Table,
        at: &str,
        k: &str,
        help: &str,
    ) -> Result<Vec<(String, &'a str)>> {
        let list_at = join(at, k);
        let Some(Value::Array(items)) = t.get(k) else {
            return Err(self.err(
                list_at,
                format!("a list is required; allowed items: {help}"),
            ));
        };
        items
            .iter()
            .enumerate()
            .map(|(i, v)| {
                let key = format!("{list_at}[{}]", i + 1);
                match v {
                    Value::String(s) => Ok((key, s.as_str())),
                    other => Err(self.err(
                        key,
                        format!("expected a string, found {}", type_name(other)),
                    )),
                }
            })
            .collect()
    }

    /// A non-empty `[[name]]` list whose entries are unique by `key` (checked at `field`).
    fn unique_list<T>(
        &self,
        t: &Table,
        name: &str,
        field: &str,
        parse: impl Fn(&Walker, &Table, &str) -> Result<T>,
        key: impl Fn(&T) -> String,
        duplicate: &str,
    ) -> Result<Vec<T>> {
        let mut items: Vec<T> = Vec::new();
        for (i, entry) in self.tables(t, name)?.into_iter().enumerate() {
            let at = format!("{name}[{}]", i + 1);
            let item = parse(self, entry, &at)?;
            let k = key(&item);
            if items.iter().any(|o| key(o) == k) {
                return Err(self.err(format!("{at}.{field}"), format!("`{k}` {duplicate}")));
            }
            items.push(item);
        }
        if items.is_empty() {
            return Err(self.err(name, format!("at least one [[{name}]] is required")));
        }
        Ok(items)
    }

    fn source(&self, t: &Table, at: &str, dir: &Path) -> Result<SourceSpec> {
        self.check_keys(
            t,
            at,
            &[
                "name",
                "path",
                "id",
                "country",
                "date_order",
                "name_order",
                "delimiter",
                "encoding",
                "columns",
            ],
        )?;
        let name = self.req_string(t, at, "name")?.trim().to_string();
        if !name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
        {
            return Err(self.err(
                join(at, "name"),
                format!("`{name}`: use letters, digits, `_` and `-` only"),
            ));
        }
        let path = dir.join(self.req_string(t, at, "path")?);
        let id_column = self.req_string(t, at, "id")?.to_string();
        let country = match self.string(t, at, "country")? {
            None => None,
            Some(c) => {
                let c = c.trim().to_ascii_uppercase();
                if c.len() != 2 || !c.chars().all(|ch| ch.is_ascii_alphabetic()) {
                    return Err(self.err(
                        join(at, "country"),
                        format!("`{c}` is not an ISO 3166 two-letter code such as US, GB, DE"),
                    ));
                }
                Some(c)
            }
        };
        let date_order = match self.string(t, at, "date_order")? {
            None | Some("ymd") => DateOrder::Ymd,
            Some("dmy") => DateOrder::Dmy,
            Some("mdy") => DateOrder::Mdy,
            Some(o) => {
                return Err(self.err(
                    join(at, "date_order"),
                    format!("`{o}` is not allowed; use one of ymd, dmy, mdy"),
                ))
            }
        };
        let name_order = match self.string(t, at, "name_order")? {
            None | Some("given_first") => NameOrder::GivenFirst,
            Some("family_first") => NameOrder::FamilyFirst,
            Some(o) => {
                return Err(self.err(
                    join(at, "name_order"),
                    format!("`{o}` is not allowed; use given_first or family_first"),
                ))
            }
        };
        let delimiter = match self.string(t, at, "delimiter")? {
            None => b',',
            Some("\\t" | "tab") => b'\t',
            Some(d) if d.len() == 1 && d.is_ascii() && !matches!(d, "\"" | "\n" | "\r") => {
                d.as_bytes()[0]
            }
            Some(d) => {
                return Err(self.err(
                    join(at, "delimiter"),
                    format!(
                        "`{}` is not one ASCII character; use e.g. \",\", \";\", \"|\" or \"\\t\" (tab)",
                        d.escape_default()
                    ),
                ))
            }
        };
        let encoding = match self.string(t, at, "encoding")? {
            None => crate::sources::Encoding::Utf8,
            Some(e) => crate::sources::Encoding::from_name(e).ok_or_else(|| {
                self.err(
                    join(at, "encoding"),
                    format!(
                        "`{e}` is not supported; use one of {}",
                        crate::sources::Encoding::NAMES
                    ),
                )
            })?,
        };
        let cols_at = join(at, "columns");
        let cols = match t.get("columns") {
            Some(Value::Table(c)) => c,
            Some(v) => {
                return Err(self.err(
                    cols_at,
                    format!(
                        "expected a table of attribute = \"header\", found {}",
                        type_name(v)
                    ),
                ))
            }
            None => {
                return Err(self.err(
                    cols_at,
                    "is required: map headers with attribute = \"header\"",
                ))
            }
        };
        let mut columns = Vec::new();
        for (k, v) in cols {
            let Some(attr) = Attr::from_name(k) else {
                return Err(self.err(
                    join(&cols_at, k),
                    format!("`{k}` is not an attribute; allowed: {}", Attr::all_names()),
                ));
            };
            let Value::String(h) = v else {
                return Err(self.err(
                    join(&cols_at, k),
                    format!("expected a header name (string), found {}", type_name(v)),
                ));
            };
            columns.push((attr, h.clone()));
        }
        if columns.is_empty() {
            return Err(self.err(cols_at, "maps no column; add attribute = \"header\" lines"));
        }
        columns.sort_by_key(|(a, _)| *a);
        Ok(SourceSpec {
            name,
            path,
            id_column,
            delimiter,
            encoding,
            conventions: Conventions {
                country,
                date_order,
                name_order,
            },
            columns,
        })
    }

    fn compare(&self, t: &Table, at: &str) -> Result<CompareSpec> {
        self.check_keys(t, at, &["attribute", "levels", "frequency"])?;
        let a = self.req_string(t, at, "attribute")?;
        let attr = Attr::from_name(a).ok_or_else(|| {
            self.err(
                join(at, "attribute"),
                format!("`{a}` is not an attribute; allowed: {}", Attr::all_names()),
            )
        })?;
        if attr == Attr::FullName {
            return Err(self.err(
                join(at, "attribute"),
                "full_name is split into given_name and family_name; compare those instead",
            ));
        }
        let levels_at = join(at, "levels");
        let mut levels = Vec::new();
        for (key, s) in self.string_items(t, at, "levels", LEVEL_HELP)? {
            let level = Level::parse(s).map_err(|m| self.err(key.clone(), m))?;
            if level.is_date_level() && attr != Attr::BirthDate {
                return Err(self.err(key, format!("`{level}` only applies to birth_date")));
            }
            if level == Level::LocalPart && attr != Attr::Email {
                return Err(self.err(key, "`local_part` only applies to email"));
            }
            if levels.contains(&level) {
                return Err(self.err(key, format!("`{level}` is listed twice")));
            }
            levels.push(level);
        }
        if levels.is_empty() {
            return Err(self.err(levels_at, "must list at least one level, e.g. [\"exact\"]"));
        }
        if levels.len() > 12 {
            return Err(self.err(levels_at, "at most 12 levels per attribute"));
        }
        let frequency = match t.get("frequency") {
            None => false,
            Some(Value::Boolean(b)) => *b,
            Some(v) => {
                return Err(self.err(
                    join(at, "frequency"),
                    format!("expected true or false, found {}", type_name(v)),
                ))
            }
        };
        if frequency && !levels.contains(&Level::Exact) {
            return Err(self.err(
                join(at, "frequency"),
                "value-frequency weights adjust the `exact` level; add \"exact\" to levels",
            ));
        }
        Ok(CompareSpec {
            attr,
            levels,
            frequency,
        })
    }

    fn block(&self, t: &Table, at: &str) -> Result<BlockSpec> {
        self.check_keys(t, at, &["name", "keys"])?;
        let name = self.req_string(t, at, "name")?.to_string();
        let keys_at = join(at, "keys");
        let mut keys = Vec::new();
        for (key, s) in self.string_items(t, at, "keys", KEY_HELP)? {
            keys.push(KeyPart::parse(s).map_err(|m| self.err(key, m))?);
        }
        if keys.is_empty() {
            return Err(self.err(keys_at, format!("must list at least one part: {KEY_HELP}")));
        }
        Ok(BlockSpec { name, keys })
    }

    fn decide(&self, root: &Table) -> Result<DecideSpec> {
        if root.contains_key("classify") {
            return Err(self.err(
                "classify",
                "this section is now called [decide], with the thresholds as probabilities: \
                 write [decide] with match_at = 0.9 and review_at = 0.5 (your values)",
            ));
        }
        let t = match root.get("decide") {
            None => return Ok(DecideSpec::default()),
            Some(Value::Table(t)) => t,
            Some(v) => {
                return Err(self.err(
                    "decide",
                    format!("expected a table, found {}", type_name(v)),
                ))
            }
        };
        let at = "decide";
        self.check_keys(t, at, &["match_at", "review_at"])?;
        let default = DecideSpec::default();
        let match_at = self.number(t, at, "match_at")?.unwrap_or(default.match_at);
        let review_at = self
            .number(t, at, "review_at")?
            .unwrap_or(default.review_at.min(match_at));
        for (k, v) in [("match_at", match_at), ("review_at", review_at)] {
            if !(v > 0.0 && v < 1.0) {
                return Err(self.err(
                    format!("decide.{k}"),
                    format!("`{v}` is a probability and must be strictly between 0 and 1"),
                ));
            }
        }
        if review_at > match_at {
            return Err(self.err(
                "decide.review_at",
                format!("`{review_at}` is above match_at `{match_at}`; it must be at most that"),
            ));
        }
        Ok(DecideSpec {
            match_at,
            review_at,
        })
    }

    fn model(&self, root: &Table) -> Result<ModelSpec> {
        let mut m = ModelSpec::default();
        let t = match root.get("model") {
            None => return Ok(m),
            Some(Value::Table(t)) => t,
            Some(v) => {
                return Err(self.err("model", format!("expected a table, found {}", type_name(v))))
            }
        };
        let at = "model";
        self.check_keys(
            t,
            at,
            &[
                "seed",
                "u_sample_pairs",
                "max_iterations",
                "max_pairs_per_key",
            ],
        )?;
        if let Some(s) = self.integer(t, at, "seed", 0)? {
            m.seed = s as u64;
        }
        if let Some(n) = self.integer(t, at, "u_sample_pairs", 1000)? {
            m.u_sample_pairs = n as usize;
        }
        if let Some(n) = self.integer(t, at, "max_iterations", 1)? {
            m.max_iterations = n as usize;
        }
        if let Some(n) = self.integer(t, at, "max_pairs_per_key", 1)? {
            m.max_pairs_per_key = n as u64;
        }
        Ok(m)
    }
}

impl Walker {
    fn cluster(&self, root: &Table, sources: &[SourceSpec]) -> Result<ClusterSpec> {
        let mut c = ClusterSpec::default();
        let t = match root.get("cluster") {
            None => return Ok(c),
            Some(Value::Table(t)) => t,
            Some(v) => {
                return Err(self.err(
                    "cluster",
                    format!("expected a table, found {}", type_name(v)),
                ))
            }
        };
        let at = "cluster";
        self.check_keys(t, at, &["max_size", "one_record_per_source", "unique"])?;
        c.max_size = self.integer(t, at, "max_size", 2)?.map(|n| n as usize);
        for (i, name) in self
            .string_list(t, at, "one_record_per_source")?
            .iter()
            .enumerate()
        {
            let Some(idx) = sources.iter().position(|s| s.name == *name) else {
                let names: Vec<&str> = sources.iter().map(|s| s.name.as_str()).collect();
                return Err(self.err(
                    format!("cluster.one_record_per_source[{}]", i + 1),
                    format!(
                        "`{name}` is not a source; the sources are {}",
                        names.join(", ")
                    ),
                ));
            };
            c.one_record_per_source.push(idx);
        }
        for (i, name) in self.string_list(t, at, "unique")?.iter().enumerate() {
            let Some(attr) = Attr::from_name(name) else {
                return Err(self.err(
                    format!("cluster.unique[{}]", i + 1),
                    format!(
                        "`{name}` is not an attribute; allowed: {}",
                        Attr::all_names()
                    ),
                ));
            };
            c.unique.push(attr);
        }
        Ok(c)
    }

    fn string_list(&self, t: &Table, at: &str, k: &str) -> Result<Vec<String>> {
        if t.get(k).is_none() {
            return Ok(Vec::new());
        }
        let items = self.string_items(t, at, k, "strings")?;
        Ok(items.into_iter().map(|(_, s)| s.to_string()).collect())
    }
}

fn join(at: &str, k: &str) -> String {
    if at.is_empty() {
        k.to_string()
    } else {
        format!("{at}.{k}")
    }
}

impl SourceSpec {
    /// True when the source maps a column that yields `attr` (full names yield both names).
    pub fn provides(&self, attr: Attr) -> bool {
        self.columns.iter().any(|(a, _)| {
            *a == attr
                || (*a == Attr::FullName && matches!(attr, Attr::GivenName | Attr::FamilyName))
                || (*a == Attr::Street && attr == Attr::HouseNumber)
                || (*a == Attr::Company && attr == Attr::LegalForm)
                || (*a == Attr::Phone && attr == Attr::PhoneType)
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const GOOD: &str = r#"
version = 1
[[source]]
name = "crm"
path = "crm.csv"
id = "id"
country = "us"
date_order = "mdy"
[source.columns]
given_name = "first"
family_name = "last"
birth_date = "dob"
[[source]]
name = "shop"
path = "data/shop.csv"
id = "account"
name_order = "family_first"
[source.columns]
full_name = "name"
email = "mail"
[[compare]]
attribute = "family_name"
levels = ["exact", "translit", "jaro_winkler >= 0.92"]
frequency = true
[[compare]]
attribute = "birth_date"
levels = ["exact", "date_swap", "same_year"]
[[block]]
name = "name"
keys = ["soundex(family_name)", "prefix(birth_date, 4)"]
[decide]
match_at = 0.95
review_at = 0.4
[model]
seed = 7
[cluster]
max_size = 20
one_record_per_source = ["shop"]
unique = ["email"]
"#;

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
    fn level_and_key_display_round_trip() {
        for s in [
            "exact",
            "jaro_winkler >= 0.85",
            "levenshtein <= 2",
            "same_year",
        ] {
            assert_eq!(Level::parse(s).unwrap().to_string(), s);
        }
        for s in [
            "email",
            "soundex(family_name)",
            "prefix(postcode, 3)",
            "year(birth_date)",
        ] {
            assert_eq!(KeyPart::parse(s).unwrap().to_string(), s);
        }
    }
}
