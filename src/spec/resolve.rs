//! The resolve step: the raw form in, the validated [`Spec`] out. Every error names the
//! key path (`source[2].columns.email`), the value found and what is allowed. The rules
//! about levels, key parts and conventions are asked of the stages that own them.

use std::path::{Path, PathBuf};

use toml::Value;

use super::raw::{
    marked_date, Keyed, Loose, LooseList, RawBlock, RawCluster, RawCompare, RawModel, RawSource,
    RawSpec, RawTable,
};
use super::{ClusterSpec, DecideSpec, ModelSpec, Spec, SPEC_VERSION};
use crate::block::{BlockSpec, KeyPart, KEY_HELP};
use crate::compare::{CompareSpec, Level, LEVEL_HELP, MAX_DECLARED_LEVELS};
use crate::error::{Error, Result};
use crate::record::Attr;
use crate::sources::database::Database;
use crate::sources::{Encoding, SourceSpec};
use crate::standardize::{default_country, Conventions, DateOrder, NameOrder};

/// Resolves the raw form of one spec file, building key-path errors.
pub(super) struct Resolver {
    /// The spec file (for messages).
    pub file: PathBuf,
}

/// How a spec message names the type of a value.
fn type_name(v: &Value) -> &'static str {
    match v {
        Value::String(_) => "a string",
        Value::Integer(_) => "an integer",
        Value::Float(_) => "a number",
        Value::Boolean(_) => "a boolean",
        Value::Datetime(_) => "a date",
        Value::Table(_) if marked_date(v).is_some() => "a date",
        Value::Array(_) => "a list",
        Value::Table(_) => "a table",
    }
}

/// `at.k`, or `k` at the root.
fn join(at: &str, k: &str) -> String {
    if at.is_empty() {
        k.to_string()
    } else {
        format!("{at}.{k}")
    }
}

impl Resolver {
    fn err(&self, key: impl Into<String>, msg: impl Into<String>) -> Error {
        Error::spec(&self.file, key, msg)
    }

    /// The table's fields, unless it has a key (the first in key order) that its raw
    /// struct does not name.
    fn check_keys<'a, T: RawTable>(&self, t: &'a Keyed<T>, at: &str) -> Result<&'a T> {
        match t.unknown.first() {
            Some(k) => Err(self.err(
                join(at, k),
                format!("unknown key; allowed here: {}", T::KEYS.join(", ")),
            )),
            None => Ok(&t.fields),
        }
    }

    fn string<'a>(
        &self,
        v: &'a Option<Loose<String>>,
        at: &str,
        k: &str,
    ) -> Result<Option<&'a str>> {
        match v {
            None => Ok(None),
            Some(Loose::Typed(s)) => Ok(Some(s.as_str())),
            Some(Loose::Other(v)) => Err(self.err(
                join(at, k),
                format!("expected a string, found {}", type_name(v)),
            )),
        }
    }

    fn req_string<'a>(&self, v: &'a Option<Loose<String>>, at: &str, k: &str) -> Result<&'a str> {
        match self.string(v, at, k)? {
            Some(s) if !s.trim().is_empty() => Ok(s),
            Some(_) => Err(self.err(join(at, k), "must not be empty")),
            None => Err(self.err(join(at, k), "is required")),
        }
    }

    fn number(&self, v: &Option<Loose<f64>>, at: &str, k: &str) -> Result<Option<f64>> {
        match v {
            None => Ok(None),
            Some(Loose::Typed(x)) => Ok(Some(*x)),
            Some(Loose::Other(v)) => Err(self.err(
                join(at, k),
                format!("expected a number, found {}", type_name(v)),
            )),
        }
    }

    fn integer(&self, v: &Option<Loose<i64>>, at: &str, k: &str, min: i64) -> Result<Option<i64>> {
        match v {
            None => Ok(None),
            Some(Loose::Typed(i)) if *i >= min => Ok(Some(*i)),
            Some(Loose::Typed(i)) => Err(self.err(
                join(at, k),
                format!("`{i}` is too small; use at least {min}"),
            )),
            Some(Loose::Other(v)) => Err(self.err(
                join(at, k),
                format!("expected a whole number, found {}", type_name(v)),
            )),
        }
    }

    /// The entries of a `[[name]]` list.
    fn tables<'a, T>(&self, list: &'a Option<LooseList<T>>, k: &str) -> Result<Vec<&'a T>> {
        match list {
            None => Ok(Vec::new()),
            Some(Loose::Typed(items)) => items
                .iter()
                .enumerate()
                .map(|(i, v)| match v {
                    Loose::Typed(t) => Ok(t),
                    Loose::Other(other) => Err(self.err(
                        format!("{k}[{}]", i + 1),
                        format!("expected a table ([[{k}]]), found {}", type_name(other)),
                    )),
                })
                .collect(),
            Some(Loose::Other(v)) => Err(self.err(
                k,
                format!(
                    "expected a list of tables written [[{k}]], found {}",
                    type_name(v)
                ),
            )),
        }
    }

    /// A single table such as `[model]`; `None` when absent.
    fn table<'a, T>(&self, t: &'a Option<Loose<T>>, k: &str) -> Result<Option<&'a T>> {
        match t {
            None => Ok(None),
            Some(Loose::Typed(t)) => Ok(Some(t)),
            Some(Loose::Other(v)) => {
                Err(self.err(k, format!("expected a table, found {}", type_name(v))))
            }
        }
    }

    pub(super) fn spec(&self, raw: &Keyed<RawSpec>, path: &Path) -> Result<Spec> {
        let raw = self.check_keys(raw, "")?;
        match &raw.version {
            Some(Value::Integer(SPEC_VERSION)) => {}
            Some(v) => {
                let written = marked_date(v).map_or_else(|| v.to_string(), str::to_string);
                return Err(self.err(
                    "version",
                    format!(
                        "`{written}` is not supported; this build reads version = {SPEC_VERSION}"
                    ),
                ));
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
            &raw.source,
            "source",
            "name",
            |r, s, at| r.source(s, at, &dir),
            |s| s.name.clone(),
            "is used by two sources; names must be unique",
        )?;
        let compares = self.unique_list(
            &raw.compare,
            "compare",
            "attribute",
            |r, c, at| r.compare(c, at),
            |c| c.attr.to_string(),
            "is compared twice; merge the two entries",
        )?;
        let blocks = self.unique_list(
            &raw.block,
            "block",
            "name",
            |r, b, at| r.block(b, at),
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
        let decide = self.decide(raw)?;
        let model = self.model(&raw.model)?;
        let cluster = self.cluster(&raw.cluster, &sources)?;
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
        list: &'a Option<LooseList<String>>,
        at: &str,
        k: &str,
        help: &str,
    ) -> Result<Vec<(String, &'a str)>> {
        let list_at = join(at, k);
        let Some(Loose::Typed(items)) = list else {
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
                    Loose::Typed(s) => Ok((key, s.as_str())),
                    Loose::Other(other) => Err(self.err(
                        key,
                        format!("expected a string, found {}", type_name(other)),
                    )),
                }
            })
            .collect()
    }

    /// A non-empty `[[name]]` list whose entries are unique by `key` (checked at `field`).
    fn unique_list<R, T>(
        &self,
        list: &Option<LooseList<R>>,
        name: &str,
        field: &str,
        parse: impl Fn(&Resolver, &R, &str) -> Result<T>,
        key: impl Fn(&T) -> String,
        duplicate: &str,
    ) -> Result<Vec<T>> {
        let mut items: Vec<T> = Vec::new();
        for (i, entry) in self.tables(list, name)?.into_iter().enumerate() {
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

    fn source(&self, s: &Keyed<RawSource>, at: &str, dir: &Path) -> Result<SourceSpec> {
        let s = self.check_keys(s, at)?;
        let name = self.req_string(&s.name, at, "name")?.trim().to_string();
        if !name
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-')
        {
            return Err(self.err(
                join(at, "name"),
                format!("`{name}`: use letters, digits, `_` and `-` only"),
            ));
        }
        let (path, database) = self.origin(s, at, dir)?;
        let id_column = self.req_string(&s.id, at, "id")?.to_string();
        let country = match self.string(&s.country, at, "country")? {
            None => None,
            // Two letters are not enough: the code must name a country (ISO 3166-1).
            Some(c) => Some(
                default_country(c)
                    .filter(|d| crate::standardize::country::country_code(d) == Some(d.as_str()))
                    .ok_or_else(|| {
                        self.err(
                            join(at, "country"),
                            format!(
                                "`{}` is not an ISO 3166 two-letter code such as US, GB, DE",
                                c.trim().to_ascii_uppercase()
                            ),
                        )
                    })?,
            ),
        };
        let date_order = match self.string(&s.date_order, at, "date_order")? {
            None => DateOrder::default(),
            Some(o) => DateOrder::from_name(o).ok_or_else(|| {
                self.err(
                    join(at, "date_order"),
                    format!("`{o}` is not allowed; use one of ymd, dmy, mdy, country"),
                )
            })?,
        };
        let name_order = match self.string(&s.name_order, at, "name_order")? {
            None => NameOrder::default(),
            Some(o) => NameOrder::from_name(o).ok_or_else(|| {
                self.err(
                    join(at, "name_order"),
                    format!("`{o}` is not allowed; use given_first, family_first or mixed"),
                )
            })?,
        };
        let delimiter = match self.string(&s.delimiter, at, "delimiter")? {
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
        let encoding = match self.string(&s.encoding, at, "encoding")? {
            None => Encoding::Utf8,
            Some(e) => Encoding::from_name(e).ok_or_else(|| {
                self.err(
                    join(at, "encoding"),
                    format!("`{e}` is not supported; use one of {}", Encoding::NAMES),
                )
            })?,
        };
        let cols_at = join(at, "columns");
        let cols = match &s.columns {
            Some(Loose::Typed(c)) => c,
            Some(Loose::Other(v)) => {
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
            let h = match v {
                Loose::Typed(h) => h,
                Loose::Other(v) => {
                    return Err(self.err(
                        join(&cols_at, k),
                        format!("expected a header name (string), found {}", type_name(v)),
                    ))
                }
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
                ..Default::default()
            },
            columns,
            database,
        })
    }

    /// Where a source's rows come from: a CSV file (`path`), or a database
    /// (`connection` with `table` or `query`).
    fn origin(&self, s: &RawSource, at: &str, dir: &Path) -> Result<(PathBuf, Option<Database>)> {
        let connection = self.string(&s.connection, at, "connection")?;
        let table = self.string(&s.table, at, "table")?;
        let query = self.string(&s.query, at, "query")?;
        if connection.is_none() {
            for (k, v) in [("table", table), ("query", query)] {
                if v.is_some() {
                    return Err(self.err(
                        join(at, k),
                        "only applies to a database source; add `connection` (a SQLite file \
                         or a postgres:// URL) and remove `path`",
                    ));
                }
            }
            if s.path.is_none() {
                return Err(self.err(
                    join(at, "path"),
                    "is required: the CSV file, relative to the spec's folder (or give \
                     `connection` with `table` or `query` to read a database)",
                ));
            }
            return Ok((dir.join(self.req_string(&s.path, at, "path")?), None));
        }
        if s.path.is_some() {
            return Err(self.err(
                join(at, "path"),
                "a source reads a CSV file (`path`) or a database (`connection`), not both; \
                 remove one",
            ));
        }
        for (k, v) in [("delimiter", &s.delimiter), ("encoding", &s.encoding)] {
            if v.is_some() {
                return Err(self.err(
                    join(at, k),
                    "only applies to a CSV source (`path`); remove it for a database source",
                ));
            }
        }
        let connection = self.req_string(&s.connection, at, "connection")?;
        let table = match table {
            Some(_) => Some(self.req_string(&s.table, at, "table")?.trim().to_string()),
            None => None,
        };
        let query = match query {
            Some(_) => Some(self.req_string(&s.query, at, "query")?.to_string()),
            None => None,
        };
        match (&table, &query) {
            (Some(_), Some(_)) => {
                return Err(self.err(join(at, "query"), "give `table` or `query`, not both"))
            }
            (None, None) => {
                return Err(self.err(
                    join(at, "table"),
                    "is required with `connection`: name a table, or give a read-only `query`",
                ))
            }
            _ => {}
        }
        let db = Database::from_spec(connection, dir, table, query)
            .map_err(|m| self.err(join(at, "connection"), m))?;
        Ok((PathBuf::new(), Some(db)))
    }

    fn compare(&self, c: &Keyed<RawCompare>, at: &str) -> Result<CompareSpec> {
        let c = self.check_keys(c, at)?;
        let a = self.req_string(&c.attribute, at, "attribute")?;
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
        for (key, s) in self.string_items(&c.levels, at, "levels", LEVEL_HELP)? {
            let level = Level::parse(s).map_err(|m| self.err(key.clone(), m))?;
            level
                .check_applies_to(attr)
                .map_err(|m| self.err(key.clone(), m))?;
            if levels.contains(&level) {
                return Err(self.err(key, format!("`{level}` is listed twice")));
            }
            levels.push(level);
        }
        if levels.is_empty() {
            return Err(self.err(levels_at, "must list at least one level, e.g. [\"exact\"]"));
        }
        if levels.len() > MAX_DECLARED_LEVELS {
            return Err(self.err(
                levels_at,
                format!("at most {MAX_DECLARED_LEVELS} levels per attribute"),
            ));
        }
        let frequency = match &c.frequency {
            None => false,
            Some(Loose::Typed(b)) => *b,
            Some(Loose::Other(v)) => {
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

    fn block(&self, b: &Keyed<RawBlock>, at: &str) -> Result<BlockSpec> {
        let b = self.check_keys(b, at)?;
        let name = self.req_string(&b.name, at, "name")?.to_string();
        let keys_at = join(at, "keys");
        let mut keys = Vec::new();
        for (key, s) in self.string_items(&b.keys, at, "keys", KEY_HELP)? {
            keys.push(KeyPart::parse(s).map_err(|m| self.err(key, m))?);
        }
        if keys.is_empty() {
            return Err(self.err(keys_at, format!("must list at least one part: {KEY_HELP}")));
        }
        let any_order = match &b.any_order {
            None => false,
            Some(Loose::Typed(v)) => *v,
            Some(Loose::Other(v)) => {
                return Err(self.err(
                    join(at, "any_order"),
                    format!("expected true or false, found {}", type_name(v)),
                ))
            }
        };
        if any_order && keys.len() < 2 {
            return Err(self.err(
                join(at, "any_order"),
                "needs at least two key parts to put in order",
            ));
        }
        Ok(BlockSpec {
            name,
            keys,
            any_order,
        })
    }

    fn decide(&self, root: &RawSpec) -> Result<DecideSpec> {
        if root.classify.is_some() {
            return Err(self.err(
                "classify",
                "this section is now called [decide], with the thresholds as probabilities: \
                 write [decide] with match_at = 0.9 and review_at = 0.5 (your values)",
            ));
        }
        let Some(t) = self.table(&root.decide, "decide")? else {
            return Ok(DecideSpec::default());
        };
        let at = "decide";
        let t = self.check_keys(t, at)?;
        let default = DecideSpec::default();
        let match_at = self
            .number(&t.match_at, at, "match_at")?
            .unwrap_or(default.match_at);
        let review_at = self
            .number(&t.review_at, at, "review_at")?
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

    fn model(&self, raw: &Option<Loose<Keyed<RawModel>>>) -> Result<ModelSpec> {
        let mut m = ModelSpec::default();
        let Some(t) = self.table(raw, "model")? else {
            return Ok(m);
        };
        let at = "model";
        let t = self.check_keys(t, at)?;
        if let Some(s) = self.integer(&t.seed, at, "seed", 0)? {
            m.seed = s as u64;
        }
        if let Some(n) = self.integer(&t.u_sample_pairs, at, "u_sample_pairs", 1000)? {
            m.u_sample_pairs = n as usize;
        }
        if let Some(n) = self.integer(&t.max_iterations, at, "max_iterations", 1)? {
            m.max_iterations = n as usize;
        }
        if let Some(n) = self.integer(&t.max_pairs_per_key, at, "max_pairs_per_key", 1)? {
            m.max_pairs_per_key = n as u64;
        }
        Ok(m)
    }

    fn cluster(
        &self,
        raw: &Option<Loose<Keyed<RawCluster>>>,
        sources: &[SourceSpec],
    ) -> Result<ClusterSpec> {
        let mut c = ClusterSpec::default();
        let Some(t) = self.table(raw, "cluster")? else {
            return Ok(c);
        };
        let at = "cluster";
        let t = self.check_keys(t, at)?;
        c.max_size = self
            .integer(&t.max_size, at, "max_size", 2)?
            .map(|n| n as usize);
        for (i, name) in self
            .string_list(&t.one_record_per_source, at, "one_record_per_source")?
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
        for (i, name) in self
            .string_list(&t.unique, at, "unique")?
            .iter()
            .enumerate()
        {
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

    fn string_list(
        &self,
        list: &Option<LooseList<String>>,
        at: &str,
        k: &str,
    ) -> Result<Vec<String>> {
        if list.is_none() {
            return Ok(Vec::new());
        }
        let items = self.string_items(list, at, k, "strings")?;
        Ok(items.into_iter().map(|(_, s)| s.to_string()).collect())
    }
}
