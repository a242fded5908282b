//! The raw form of a spec: its TOML read by serde into structs that name every key the
//! spec may hold. Values are kept as written ([`Loose`]) so that the resolve step can
//! name the key path, the value found and what is allowed; keys a struct does not name
//! are listed by [`Keyed`] and reported the same way.

use std::collections::BTreeMap;

use serde::de::DeserializeOwned;
use serde::{Deserialize, Deserializer};
use toml::Value;

/// A value as written: of the expected type, or the value itself when it is not, so that
/// the error can say what was found.
#[derive(Debug, Clone)]
pub enum Loose<T> {
    /// The value has the expected type.
    Typed(T),
    /// The value as written, of another type.
    Other(Value),
}

impl<'de, T: DeserializeOwned> Deserialize<'de> for Loose<T> {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let v = Value::deserialize(d)?;
        Ok(match T::deserialize(v.clone()) {
            Ok(t) => Loose::Typed(t),
            Err(_) => Loose::Other(v),
        })
    }
}

/// The key of the one-entry table that stands for a TOML date in the raw form: serde's
/// reading of a `toml::Value` turns dates into strings, and no spec key takes a date, so
/// [`mark_dates`] keeps them recognizable for the message ("found a date").
const DATE_MARK: &str = "$samekey-date";

/// Replace every date in `table` (at any depth) by a marked one-entry table.
pub fn mark_dates(table: &mut toml::Table) {
    fn mark(v: &mut Value) {
        match v {
            Value::Datetime(d) => {
                let mut t = toml::Table::new();
                t.insert(DATE_MARK.to_string(), Value::String(d.to_string()));
                *v = Value::Table(t);
            }
            Value::Array(items) => items.iter_mut().for_each(mark),
            Value::Table(t) => t.iter_mut().for_each(|(_, v)| mark(v)),
            _ => {}
        }
    }
    table.iter_mut().for_each(|(_, v)| mark(v));
}

/// The date a marked table stands for.
pub fn marked_date(v: &Value) -> Option<&str> {
    match v {
        Value::Table(t) if t.len() == 1 => t.get(DATE_MARK).and_then(Value::as_str),
        _ => None,
    }
}

/// A list whose items are each checked on their own.
pub type LooseList<T> = Loose<Vec<Loose<T>>>;

/// A raw struct read from one TOML table.
pub trait RawTable: DeserializeOwned {
    /// The keys the struct names, in the order messages list them.
    const KEYS: &'static [&'static str];
}

/// A table read into its raw struct, with the keys the struct does not name.
#[derive(Debug, Clone)]
pub struct Keyed<T> {
    /// The named keys.
    pub fields: T,
    /// Keys of the table that `T` does not name, in key order.
    pub unknown: Vec<String>,
}

impl<'de, T: RawTable> Deserialize<'de> for Keyed<T> {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        let table = toml::Table::deserialize(d)?;
        let unknown = table
            .keys()
            .filter(|k| !T::KEYS.contains(&k.as_str()))
            .cloned()
            .collect();
        let fields = T::deserialize(Value::Table(table)).map_err(serde::de::Error::custom)?;
        Ok(Keyed { fields, unknown })
    }
}

/// The whole spec file.
#[derive(Debug, Deserialize)]
pub struct RawSpec {
    /// `version`: the spec format version.
    pub version: Option<Value>,
    /// `[[source]]`: the source systems.
    pub source: Option<LooseList<Keyed<RawSource>>>,
    /// `[[compare]]`: compared attributes and their levels.
    pub compare: Option<LooseList<Keyed<RawCompare>>>,
    /// `[[block]]`: blocking keys.
    pub block: Option<LooseList<Keyed<RawBlock>>>,
    /// `[decide]`: thresholds.
    pub decide: Option<Loose<Keyed<RawDecide>>>,
    /// `[classify]`: the old name of `[decide]`, refused with a message naming the new one.
    pub classify: Option<Value>,
    /// `[model]`: model settings.
    pub model: Option<Loose<Keyed<RawModel>>>,
    /// `[cluster]`: clustering guards.
    pub cluster: Option<Loose<Keyed<RawCluster>>>,
}

/// One `[[source]]` entry.
#[derive(Debug, Deserialize)]
pub struct RawSource {
    /// Short name of the source.
    pub name: Option<Loose<String>>,
    /// CSV path, relative to the spec's folder.
    pub path: Option<Loose<String>>,
    /// Header of the id column.
    pub id: Option<Loose<String>>,
    /// Default country (ISO 3166 alpha-2).
    pub country: Option<Loose<String>>,
    /// `ymd`, `dmy` or `mdy`.
    pub date_order: Option<Loose<String>>,
    /// `given_first` or `family_first`.
    pub name_order: Option<Loose<String>>,
    /// One ASCII character, or `tab`.
    pub delimiter: Option<Loose<String>>,
    /// Character encoding of the file.
    pub encoding: Option<Loose<String>>,
    /// Attribute → header.
    pub columns: Option<Loose<BTreeMap<String, Loose<String>>>>,
    /// A database instead of a CSV file: a SQLite file or a `postgres://` URL.
    pub connection: Option<Loose<String>>,
    /// The table to read from the database.
    pub table: Option<Loose<String>>,
    /// Or a read-only query to run on the database.
    pub query: Option<Loose<String>>,
}

/// One `[[compare]]` entry.
#[derive(Debug, Deserialize)]
pub struct RawCompare {
    /// The compared attribute.
    pub attribute: Option<Loose<String>>,
    /// Agreement levels, best first.
    pub levels: Option<LooseList<String>>,
    /// Value-frequency weights for the exact level.
    pub frequency: Option<Loose<bool>>,
}

/// One `[[block]]` entry.
#[derive(Debug, Deserialize)]
pub struct RawBlock {
    /// Name of the blocking key.
    pub name: Option<Loose<String>>,
    /// Key parts.
    pub keys: Option<LooseList<String>>,
    /// Sort the parts' values before joining them.
    pub any_order: Option<Loose<bool>>,
}

/// The `[decide]` table.
#[derive(Debug, Deserialize)]
pub struct RawDecide {
    /// Probability at or above which a pair is a match.
    pub match_at: Option<Loose<f64>>,
    /// Probability at or above which a pair goes to review.
    pub review_at: Option<Loose<f64>>,
}

/// The `[model]` table.
#[derive(Debug, Deserialize)]
pub struct RawModel {
    /// Seed of the random pair sample.
    pub seed: Option<Loose<i64>>,
    /// Random record pairs for the u-probabilities.
    pub u_sample_pairs: Option<Loose<i64>>,
    /// EM iteration limit.
    pub max_iterations: Option<Loose<i64>>,
    /// Candidate-pair limit per blocking key.
    pub max_pairs_per_key: Option<Loose<i64>>,
}

/// The `[cluster]` table.
#[derive(Debug, Deserialize)]
pub struct RawCluster {
    /// Largest allowed cluster.
    pub max_size: Option<Loose<i64>>,
    /// Sources with at most one record per customer.
    pub one_record_per_source: Option<LooseList<String>>,
    /// Attributes unique per person.
    pub unique: Option<LooseList<String>>,
}

impl RawTable for RawSpec {
    const KEYS: &'static [&'static str] = &[
        "version", "source", "compare", "block", "decide", "classify", "model", "cluster",
    ];
}

impl RawTable for RawSource {
    const KEYS: &'static [&'static str] = &[
        "name",
        "path",
        "connection",
        "table",
        "query",
        "id",
        "country",
        "date_order",
        "name_order",
        "delimiter",
        "encoding",
        "columns",
    ];
}

impl RawTable for RawCompare {
    const KEYS: &'static [&'static str] = &["attribute", "levels", "frequency"];
}

impl RawTable for RawBlock {
    const KEYS: &'static [&'static str] = &["name", "keys", "any_order"];
}

impl RawTable for RawDecide {
    const KEYS: &'static [&'static str] = &["match_at", "review_at"];
}

impl RawTable for RawModel {
    const KEYS: &'static [&'static str] = &[
        "seed",
        "u_sample_pairs",
        "max_iterations",
        "max_pairs_per_key",
    ];
}

impl RawTable for RawCluster {
    const KEYS: &'static [&'static str] = &["max_size", "one_record_per_source", "unique"];
}
