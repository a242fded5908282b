//! Standard attributes and the in-memory record table shared by all stages.
//!
//! Sources map their own column names onto [`Attr`]; standardization turns raw strings
//! into [`StdRecord`]s; [`RecordTable`] stores them column-wise with every distinct
//! value interned once, so that later stages compare small integer ids.
//! [`RecordTableBuilder`] interns records one by one or in [`RecordBatch`]es (columns in
//! parallel); either way a value's id is its rank of first appearance in its column.

use rayon::prelude::*;
use rustc_hash::FxBuildHasher;
use std::collections::hash_map::Entry;
use std::fmt;
use std::hash::{BuildHasher, BuildHasherDefault, Hash, Hasher};

/// The standard attributes a source column can be mapped to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Attr {
    /// Given (first) name(s).
    GivenName,
    /// Family (last) name, with particles such as van/von/de.
    FamilyName,
    /// A whole name in one column; split into given and family name.
    FullName,
    /// E-mail address.
    Email,
    /// Telephone number.
    Phone,
    /// Street line (street name, possibly with house number and unit).
    Street,
    /// House number.
    HouseNumber,
    /// Apartment, suite or other unit.
    Unit,
    /// Postal code.
    Postcode,
    /// City or town.
    City,
    /// State, province or region.
    Region,
    /// Country (ISO 3166 alpha-2 after standardization).
    Country,
    /// Date of birth (ISO `YYYY-MM-DD` after standardization).
    BirthDate,
    /// Company (organisation) name, without its legal form.
    Company,
    /// Legal form of a company (inc, llc, gmbh, sarl, ...), split off the company name.
    LegalForm,
    /// Kind of line of the phone number (`mobile`, `fixed_line`,
    /// `fixed_line_or_mobile`, `toll_free`, `voip`, ...), derived from the phone number
    /// when no column gives it.
    PhoneType,
}

impl Attr {
    /// All attributes in their canonical order.
    pub const ALL: [Attr; 16] = [
        Attr::GivenName,
        Attr::FamilyName,
        Attr::FullName,
        Attr::Email,
        Attr::Phone,
        Attr::Street,
        Attr::HouseNumber,
        Attr::Unit,
        Attr::Postcode,
        Attr::City,
        Attr::Region,
        Attr::Country,
        Attr::BirthDate,
        Attr::Company,
        Attr::LegalForm,
        Attr::PhoneType,
    ];

    /// Number of attributes.
    pub const COUNT: usize = Attr::ALL.len();

    /// The spec name of the attribute (`given_name`, `family_name`, ...).
    pub fn name(self) -> &'static str {
        match self {
            Attr::GivenName => "given_name",
            Attr::FamilyName => "family_name",
            Attr::FullName => "full_name",
            Attr::Email => "email",
            Attr::Phone => "phone",
            Attr::Street => "street",
            Attr::HouseNumber => "house_number",
            Attr::Unit => "unit",
            Attr::Postcode => "postcode",
            Attr::City => "city",
            Attr::Region => "region",
            Attr::Country => "country",
            Attr::BirthDate => "birth_date",
            Attr::Company => "company",
            Attr::LegalForm => "legal_form",
            Attr::PhoneType => "phone_type",
        }
    }

    /// Parse a spec name.
    pub fn from_name(name: &str) -> Option<Attr> {
        Attr::ALL.iter().copied().find(|a| a.name() == name)
    }

    /// Comma-separated list of all names, for error messages.
    pub fn all_names() -> String {
        Attr::ALL
            .iter()
            .map(|a| a.name())
            .collect::<Vec<_>>()
            .join(", ")
    }

    /// Position in [`Attr::ALL`].
    pub fn index(self) -> usize {
        self as usize
    }
}

impl fmt::Display for Attr {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// One standardized record: a value (or nothing) per attribute.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct StdRecord {
    /// Values indexed by [`Attr::index`]; `None` is missing.
    pub values: [Option<String>; Attr::COUNT],
}

impl StdRecord {
    /// The value of `attr`, if present.
    pub fn get(&self, attr: Attr) -> Option<&str> {
        self.values[attr.index()].as_deref()
    }

    /// Set `attr`; empty strings become missing.
    pub fn set(&mut self, attr: Attr, value: Option<String>) {
        self.values[attr.index()] = value.filter(|v| !v.is_empty());
    }
}

/// Id of an interned value inside one [`Column`]; [`MISSING`] means no value.
pub type ValueId = u32;

/// The value id of a missing value.
pub const MISSING: ValueId = 0;

/// One attribute's values for all records, dictionary-encoded.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Column {
    /// Per record, the id of its value (`MISSING` = none).
    pub ids: Vec<ValueId>,
    /// Distinct values; index 0 is the empty placeholder for missing.
    pub dict: Vec<String>,
    /// How many records carry each value id (index 0 counts missing values).
    pub counts: Vec<u32>,
}

impl Column {
    /// The value of record `row`, if present.
    pub fn get(&self, row: usize) -> Option<&str> {
        match self.ids[row] {
            MISSING => None,
            id => Some(&self.dict[id as usize]),
        }
    }

    /// The string of a value id.
    pub fn value(&self, id: ValueId) -> &str {
        &self.dict[id as usize]
    }

    /// Number of records with a value.
    pub fn present(&self) -> usize {
        self.ids.len() - self.counts[0] as usize
    }
}

/// Identity of a record: which source it came from and its id there.
#[derive(Debug, Clone, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct RecordKey {
    /// Index of the source in the spec.
    pub source: u16,
    /// The record's id in its source.
    pub id: String,
}

/// All records of a run, column-wise and interned.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RecordTable {
    /// Source names, indexed by `RecordKey::source`.
    pub source_names: Vec<String>,
    /// Per record, its source index.
    pub source: Vec<u16>,
    /// Per record, its id within the source.
    pub id: Vec<String>,
    /// One column per attribute, indexed by [`Attr::index`].
    pub columns: Vec<Column>,
}

impl RecordTable {
    /// Number of records.
    pub fn len(&self) -> usize {
        self.id.len()
    }

    /// True when the table holds no records.
    pub fn is_empty(&self) -> bool {
        self.id.is_empty()
    }

    /// The column of `attr`.
    pub fn column(&self, attr: Attr) -> &Column {
        &self.columns[attr.index()]
    }

    /// The value of `attr` for record `row`.
    pub fn get(&self, row: usize, attr: Attr) -> Option<&str> {
        self.columns[attr.index()].get(row)
    }

    /// The source name of record `row`.
    pub fn source_name(&self, row: usize) -> &str {
        &self.source_names[self.source[row] as usize]
    }
}

/// A value with its hash, computed once where the value is made (in parallel) and
/// reused by the dictionary for lookups and when it grows.
#[derive(Debug, Clone)]
struct Hashed {
    hash: u64,
    value: String,
}

impl Hashed {
    fn new(value: String) -> Self {
        Hashed {
            hash: FxBuildHasher.hash_one(value.as_str()),
            value,
        }
    }
}

impl PartialEq for Hashed {
    fn eq(&self, other: &Self) -> bool {
        self.hash == other.hash && self.value == other.value
    }
}

impl Eq for Hashed {}

impl Hash for Hashed {
    fn hash<H: Hasher>(&self, state: &mut H) {
        state.write_u64(self.hash);
    }
}

/// Hasher for keys that carry their own hash (written with `write_u64`): passes it
/// through.
#[derive(Default)]
pub struct StoredHash(u64);

/// Builds [`StoredHash`]ers, for maps whose keys carry their own hash.
pub type PassThroughHash = BuildHasherDefault<StoredHash>;

impl Hasher for StoredHash {
    fn finish(&self) -> u64 {
        self.0
    }

    fn write(&mut self, bytes: &[u8]) {
        // Keys write their hash with `write_u64`; fold anything else in for completeness.
        for &b in bytes {
            self.0 = self.0.rotate_left(5) ^ u64::from(b);
        }
    }

    fn write_u64(&mut self, v: u64) {
        self.0 = v;
    }
}

type Dictionary = std::collections::HashMap<Hashed, ValueId, PassThroughHash>;

/// Standardized records of one source, stored column-wise, waiting to be interned.
///
/// Parallel standardization fills one batch per task (hashing the values there);
/// [`RecordTableBuilder::append`] interns a sequence of batches in order.
#[derive(Debug, Clone)]
pub struct RecordBatch {
    source: u16,
    ids: Vec<String>,
    values: [Vec<Option<Hashed>>; Attr::COUNT],
}

impl RecordBatch {
    /// An empty batch of records of `source`, with room for `capacity` records.
    pub fn with_capacity(source: u16, capacity: usize) -> Self {
        RecordBatch {
            source,
            ids: Vec::with_capacity(capacity),
            values: std::array::from_fn(|_| Vec::with_capacity(capacity)),
        }
    }

    /// Add one record (its values are moved, not copied).
    pub fn push(&mut self, id: String, record: StdRecord) {
        self.ids.push(id);
        for (col, value) in self.values.iter_mut().zip(record.values) {
            col.push(value.map(Hashed::new));
        }
    }

    /// Number of records in the batch.
    pub fn len(&self) -> usize {
        self.ids.len()
    }

    /// True when the batch holds no records.
    pub fn is_empty(&self) -> bool {
        self.ids.is_empty()
    }
}

/// One column under construction: ids and counts as they come, the dictionary kept as
/// the keys of `lookup` until [`ColumnBuilder::finish`].
#[derive(Debug)]
struct ColumnBuilder {
    ids: Vec<ValueId>,
    counts: Vec<u32>,
    lookup: Dictionary,
}

impl ColumnBuilder {
    fn new() -> Self {
        ColumnBuilder {
            ids: Vec::new(),
            counts: vec![0],
            lookup: Dictionary::default(),
        }
    }

    /// Intern `value` (new values get the next id, in order of first appearance).
    fn push(&mut self, value: Option<Hashed>) {
        let vid = match value {
            None => MISSING,
            Some(v) => {
                let next = self.counts.len() as ValueId;
                match self.lookup.entry(v) {
                    Entry::Occupied(e) => *e.get(),
                    Entry::Vacant(e) => {
                        e.insert(next);
                        self.counts.push(0);
                        next
                    }
                }
            }
        };
        self.counts[vid as usize] += 1;
        self.ids.push(vid);
    }

    fn finish(self) -> Column {
        let mut dict = vec![String::new(); self.counts.len()];
        for (key, id) in self.lookup {
            dict[id as usize] = key.value;
        }
        Column {
            ids: self.ids,
            dict,
            counts: self.counts,
        }
    }
}

/// Builds a [`RecordTable`] record by record (or batch by batch), interning values as
/// they come: a value's id is its rank of first appearance in its column.
#[derive(Debug)]
pub struct RecordTableBuilder {
    source_names: Vec<String>,
    source: Vec<u16>,
    id: Vec<String>,
    columns: Vec<ColumnBuilder>,
    /// Records announced by [`RecordTableBuilder::expect`], not yet used for sizing
    /// the dictionaries.
    expected: Option<usize>,
}

impl RecordTableBuilder {
    /// An empty builder for the given source names.
    pub fn new(source_names: Vec<String>) -> Self {
        RecordTableBuilder {
            source_names,
            source: Vec::new(),
            id: Vec::new(),
            columns: (0..Attr::COUNT).map(|_| ColumnBuilder::new()).collect(),
            expected: None,
        }
    }

    /// Announce that about `rows` more records will follow: the record vectors are
    /// reserved now, each column's dictionary after the next [`append`], from the
    /// share of new values in it. Only a hint: more or fewer records may follow.
    ///
    /// [`append`]: RecordTableBuilder::append
    pub fn expect(&mut self, rows: usize) {
        self.reserve(rows);
        self.expected = Some(rows);
    }

    /// Make room for `additional` more records (avoids regrowing large vectors).
    pub fn reserve(&mut self, additional: usize) {
        self.source.reserve(additional);
        self.id.reserve(additional);
        for col in &mut self.columns {
            col.ids.reserve(additional);
        }
    }

    /// Number of records pushed so far.
    pub fn len(&self) -> usize {
        self.id.len()
    }

    /// True when no record was pushed yet.
    pub fn is_empty(&self) -> bool {
        self.id.is_empty()
    }

    /// The ids of the records pushed so far, in push order.
    pub fn ids(&self) -> &[String] {
        &self.id
    }

    /// Append one record.
    pub fn push(&mut self, source: u16, id: String, record: StdRecord) {
        self.source.push(source);
        self.id.push(id);
        for (col, value) in self.columns.iter_mut().zip(record.values) {
            col.push(value.map(Hashed::new));
        }
    }

    /// Append the records of `batches`, in order. The columns are interned in parallel;
    /// the result is the same as pushing the records one by one.
    pub fn append(&mut self, batches: Vec<RecordBatch>) {
        let rows: usize = batches.iter().map(RecordBatch::len).sum();
        let mut per_column: Vec<Vec<Vec<Option<Hashed>>>> = (0..Attr::COUNT)
            .map(|_| Vec::with_capacity(batches.len()))
            .collect();
        self.source.reserve(rows);
        self.id.reserve(rows);
        let mut ids = Vec::with_capacity(batches.len());
        for batch in batches {
            self.source
                .extend(std::iter::repeat_n(batch.source, batch.ids.len()));
            ids.push(batch.ids);
            for (k, values) in batch.values.into_iter().enumerate() {
                per_column[k].push(values);
            }
        }
        let id = &mut self.id;
        let expected = self.expected.take();
        rayon::join(
            || {
                for part in ids {
                    id.extend(part);
                }
            },
            || {
                self.columns
                    .par_iter_mut()
                    .zip(per_column)
                    .for_each(|(col, parts)| {
                        col.ids.reserve(rows);
                        let before = col.counts.len();
                        for part in parts {
                            for value in part {
                                col.push(value);
                            }
                        }
                        if let Some(more) = expected {
                            // New values in this append, extrapolated to the rest.
                            let new = (col.counts.len() - before) as f64 / rows.max(1) as f64;
                            let extra = (new * more.saturating_sub(rows) as f64) as usize;
                            col.lookup.reserve(extra);
                            col.counts.reserve(extra);
                        }
                    })
            },
        );
    }

    /// Finish building.
    pub fn finish(self) -> RecordTable {
        RecordTable {
            source_names: self.source_names,
            source: self.source,
            id: self.id,
            columns: self
                .columns
                .into_par_iter()
                .map(ColumnBuilder::finish)
                .collect(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn attribute_names_round_trip() {
        for a in Attr::ALL {
            assert_eq!(Attr::from_name(a.name()), Some(a));
            assert_eq!(Attr::ALL[a.index()], a);
        }
        assert_eq!(Attr::from_name("surname"), None);
    }

    #[test]
    fn builder_interns_values() {
        let mut b = RecordTableBuilder::new(vec!["a".into()]);
        for (id, fam) in [("1", Some("smith")), ("2", Some("smith")), ("3", None)] {
            let mut r = StdRecord::default();
            r.set(Attr::FamilyName, fam.map(String::from));
            b.push(0, id.into(), r);
        }
        let t = b.finish();
        let c = t.column(Attr::FamilyName);
        assert_eq!(c.ids, vec![1, 1, MISSING]);
        assert_eq!(c.dict.len(), 2);
        assert_eq!(c.counts, vec![1, 2]);
        assert_eq!(c.present(), 2);
        assert_eq!(t.get(0, Attr::FamilyName), Some("smith"));
        assert_eq!(t.get(2, Attr::FamilyName), None);
    }

    fn record(values: &[Option<&str>]) -> StdRecord {
        let mut r = StdRecord::default();
        for (k, v) in values.iter().enumerate() {
            r.values[k] = v.map(String::from);
        }
        r
    }

    #[test]
    fn ids_follow_first_appearance_and_dict_holds_each_value_once() {
        let mut b = RecordTableBuilder::new(vec!["a".into()]);
        for v in ["b", "a", "b", "c", "a"] {
            b.push(0, v.into(), record(&[Some(v)]));
        }
        let t = b.finish();
        let c = t.column(Attr::GivenName);
        assert_eq!(c.ids, vec![1, 2, 1, 3, 2]);
        assert_eq!(c.dict, vec!["", "b", "a", "c"]);
        assert_eq!(c.counts, vec![0, 2, 2, 1]);
        assert_eq!(t.column(Attr::FamilyName).counts, vec![5]);
    }

    mod props {
        use super::*;
        use proptest::prelude::*;

        /// Records over a small alphabet of values, so that values repeat.
        fn records() -> impl Strategy<Value = Vec<(u16, Vec<Option<String>>)>> {
            let value = proptest::option::of("[abc]{0,2}");
            prop::collection::vec((0u16..3, prop::collection::vec(value, Attr::COUNT)), 0..60)
        }

        proptest! {
            /// Appending batches (cut anywhere) builds the same table as pushing the
            /// records one by one, on one thread or two.
            #[test]
            fn append_equals_push(rows in records(), cuts in prop::collection::vec(1usize..20, 1..10), threads in 1usize..3) {
                let names = vec!["a".to_string(), "b".into(), "c".into()];
                let to_record = |values: &Vec<Option<String>>| StdRecord {
                    values: std::array::from_fn(|k| values[k].clone()),
                };
                let mut one = RecordTableBuilder::new(names.clone());
                for (i, (src, values)) in rows.iter().enumerate() {
                    one.push(*src, i.to_string(), to_record(values));
                }
                let expected = one.finish();

                let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().unwrap();
                let got = pool.install(|| {
                    let mut b = RecordTableBuilder::new(names.clone());
                    b.reserve(rows.len() / 2);
                    let mut i = 0;
                    let mut cut = cuts.iter().cycle();
                    while i < rows.len() {
                        // A call to append takes a few batches, each of one source.
                        let end = (i + cut.next().copied().unwrap_or(1)).min(rows.len());
                        let mut batches: Vec<RecordBatch> = Vec::new();
                        for (j, (src, values)) in rows.iter().enumerate().take(end).skip(i) {
                            if batches.last().is_none_or(|b| b.source != *src || b.len() >= 3) {
                                batches.push(RecordBatch::with_capacity(*src, 3));
                            }
                            if let Some(last) = batches.last_mut() {
                                last.push(j.to_string(), to_record(values));
                            }
                        }
                        b.append(batches);
                        prop_assert_eq!(b.len(), end);
                        i = end;
                    }
                    Ok(b.finish())
                })?;
                prop_assert_eq!(got, expected);
            }
        }
    }
}
