//! Standard attributes and the in-memory record table shared by all stages.
//!
//! Sources map their own column names onto [`Attr`]; standardization turns raw strings
//! into [`StdRecord`]s; [`RecordTable`] stores them column-wise with every distinct
//! value interned once, so that later stages compare small integer ids.

use rustc_hash::FxHashMap as HashMap;
use std::fmt;

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
}

impl Attr {
    /// All attributes in their canonical order.
    pub const ALL: [Attr; 15] = [
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
#[derive(Debug, Clone)]
pub struct Column {
    /// Per record, the id of its value (`MISSING` = none).
    pub ids: Vec<ValueId>,
    /// Distinct values; index 0 is the empty placeholder for missing.
    pub dict: Vec<String>,
    /// How many records carry each value id (index 0 counts missing values).
    pub counts: Vec<u32>,
}

impl Column {
    fn new() -> Self {
        Column {
            ids: Vec::new(),
            dict: vec![String::new()],
            counts: vec![0],
        }
    }

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
#[derive(Debug, Clone)]
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

/// Builds a [`RecordTable`] record by record, interning values as they come.
#[derive(Debug)]
pub struct RecordTableBuilder {
    table: RecordTable,
    lookup: Vec<HashMap<String, ValueId>>,
}

impl RecordTableBuilder {
    /// An empty builder for the given source names.
    pub fn new(source_names: Vec<String>) -> Self {
        RecordTableBuilder {
            table: RecordTable {
                source_names,
                source: Vec::new(),
                id: Vec::new(),
                columns: (0..Attr::COUNT).map(|_| Column::new()).collect(),
            },
            lookup: (0..Attr::COUNT).map(|_| HashMap::default()).collect(),
        }
    }

    /// Append one record.
    pub fn push(&mut self, source: u16, id: String, record: StdRecord) {
        self.table.source.push(source);
        self.table.id.push(id);
        for (k, value) in record.values.into_iter().enumerate() {
            let col = &mut self.table.columns[k];
            let vid = match value {
                None => MISSING,
                Some(v) => match self.lookup[k].get(&v) {
                    Some(&id) => id,
                    None => {
                        let id = col.dict.len() as ValueId;
                        col.dict.push(v.clone());
                        col.counts.push(0);
                        self.lookup[k].insert(v, id);
                        id
                    }
                },
            };
            col.counts[vid as usize] += 1;
            col.ids.push(vid);
        }
    }

    /// Finish building.
    pub fn finish(self) -> RecordTable {
        self.table
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
}
