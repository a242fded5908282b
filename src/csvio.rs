//! The CSV edge: one reader and one writer for the files samekey reads and writes beside
//! the sources (truth files, crosswalks, candidate pairs, shard pairs, synthetic data).
//!
//! In: a path. Out: rows with their line numbers, columns found by header name, and
//! errors that name the file, the line and the column; writing goes through
//! `csv::Writer` and fails as [`Error::Write`] (an internal failure), reading as bad
//! input. The sources have their own chunked, parallel reader (`sources`), which shares
//! the header lookup rule: a header names a column exactly.

use std::fs::File;
use std::io::BufWriter;
use std::path::{Path, PathBuf};

use crate::error::{Error, Result};

/// A header field as samekey reads it: without the byte-order mark a first field may
/// start with, and without surrounding spaces. Sources and the other inputs share it.
pub fn clean_header(index: usize, field: &str) -> String {
    let field = if index == 0 {
        field.trim_start_matches('\u{feff}')
    } else {
        field
    };
    field.trim().to_string()
}

/// The position of the column named `wanted` in a cleaned header (exact match).
pub fn find_header(headers: &[String], wanted: &str) -> Option<usize> {
    headers.iter().position(|h| h == wanted)
}

/// An input CSV file with a header row, read row by row.
#[derive(Debug)]
pub struct CsvTable {
    path: PathBuf,
    rdr: csv::Reader<File>,
    headers: Vec<String>,
}

impl CsvTable {
    /// Open `path` and read its header; with `trim`, spaces around fields are dropped.
    pub fn open(path: &Path, trim: bool) -> Result<CsvTable> {
        let file = File::open(path).map_err(|e| Error::io(path, e))?;
        let mut rdr = csv::ReaderBuilder::new()
            .trim(if trim {
                csv::Trim::All
            } else {
                csv::Trim::None
            })
            .from_reader(file);
        let headers = rdr
            .headers()
            .map_err(|source| Error::Csv {
                path: path.into(),
                source,
            })?
            .iter()
            .enumerate()
            .map(|(i, h)| clean_header(i, h))
            .collect();
        Ok(CsvTable {
            path: path.to_path_buf(),
            rdr,
            headers,
        })
    }

    /// The file being read.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The positions of the columns named `wanted`, in that order; a missing one is an
    /// error listing the wanted names and the header found.
    pub fn columns(&self, wanted: &[&str]) -> Result<Vec<usize>> {
        let quoted = |names: &mut dyn Iterator<Item = &str>| {
            names
                .map(|h| format!("`{h}`"))
                .collect::<Vec<_>>()
                .join(", ")
        };
        wanted
            .iter()
            .map(|w| {
                find_header(&self.headers, w).ok_or_else(|| {
                    let found = if self.headers.iter().all(String::is_empty) {
                        "no header (empty file?)".to_owned()
                    } else {
                        quoted(&mut self.headers.iter().map(String::as_str))
                    };
                    Error::input(
                        &self.path,
                        format!(
                            "missing column `{w}`: the header must name {}; found {found}",
                            quoted(&mut wanted.iter().copied())
                        ),
                    )
                })
            })
            .collect()
    }

    /// Calls `f(line, row)` for every data row (the header is line 1).
    pub fn for_each_row(
        &mut self,
        mut f: impl FnMut(u64, &csv::StringRecord) -> Result<()>,
    ) -> Result<()> {
        let mut row = csv::StringRecord::new();
        loop {
            match self.rdr.read_record(&mut row) {
                Ok(false) => return Ok(()),
                Ok(true) => {}
                Err(source) => {
                    return Err(Error::Csv {
                        path: self.path.clone(),
                        source,
                    })
                }
            }
            let line = row.position().map_or(0, |p| p.line());
            f(line, &row)?;
        }
    }

    /// Calls `f(line, values)` for every data row with the values of the columns named
    /// `wanted`, each required to be non-empty.
    pub fn for_each_filled(
        &mut self,
        wanted: &[&str],
        mut f: impl FnMut(u64, &[&str]) -> Result<()>,
    ) -> Result<()> {
        let cols = self.columns(wanted)?;
        let path = self.path.clone();
        self.for_each_row(|line, row| {
            let mut values: Vec<&str> = Vec::with_capacity(cols.len());
            for (&c, name) in cols.iter().zip(wanted) {
                let v = row.get(c).unwrap_or("");
                if v.is_empty() {
                    return Err(Error::input(
                        &path,
                        format!("line {line}: empty `{name}`; every row needs a value there"),
                    ));
                }
                values.push(v);
            }
            f(line, &values)
        })
    }
}

/// An output CSV file, written through `csv::Writer` (fields quoted when needed).
#[derive(Debug)]
pub struct CsvWriter {
    path: PathBuf,
    w: csv::Writer<BufWriter<File>>,
}

impl CsvWriter {
    /// Create (or truncate) `path`.
    pub fn create(path: &Path) -> Result<CsvWriter> {
        let file = File::create(path).map_err(|e| Error::write(path, e))?;
        Ok(CsvWriter {
            path: path.to_path_buf(),
            w: csv::Writer::from_writer(BufWriter::with_capacity(1 << 20, file)),
        })
    }

    /// Write one row.
    pub fn row<I, S>(&mut self, fields: I) -> Result<()>
    where
        I: IntoIterator<Item = S>,
        S: AsRef<[u8]>,
    {
        self.w
            .write_record(fields)
            .map_err(|e| Error::write_csv(&self.path, e))
    }

    /// Flush everything to the file.
    pub fn finish(self) -> Result<()> {
        let path = self.path;
        let mut inner = self
            .w
            .into_inner()
            .map_err(|e| Error::write(&path, e.into_error()))?;
        std::io::Write::flush(&mut inner).map_err(|e| Error::write(&path, e))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn round_trip_with_lines_quotes_and_header_lookup() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("t.csv");
        let mut w = CsvWriter::create(&p).unwrap();
        w.row(["id", "name"]).unwrap();
        w.row(["1", "Smith, \"Jo\""]).unwrap();
        w.row(["2", "multi\nline"]).unwrap();
        w.row(["3", "x"]).unwrap();
        w.finish().unwrap();
        let mut t = CsvTable::open(&p, false).unwrap();
        assert_eq!(t.columns(&["name", "id"]).unwrap(), vec![1, 0]);
        let mut got = Vec::new();
        t.for_each_filled(&["id", "name"], |line, v| {
            got.push((line, v[0].to_string(), v[1].to_string()));
            Ok(())
        })
        .unwrap();
        // The quoted field spans two lines, so the next row starts on line 5.
        assert_eq!(
            got,
            vec![
                (2, "1".into(), "Smith, \"Jo\"".into()),
                (3, "2".into(), "multi\nline".into()),
                (5, "3".into(), "x".into())
            ]
        );
    }

    #[test]
    fn a_byte_order_mark_and_spaces_are_not_part_of_a_header() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("t.csv");
        std::fs::write(&p, "\u{feff}source, source_id ,entity_id\ncrm,1,e1\n").unwrap();
        let t = CsvTable::open(&p, true).unwrap();
        assert_eq!(
            t.columns(&["source", "source_id", "entity_id"]).unwrap(),
            vec![0, 1, 2]
        );
    }

    #[test]
    fn errors_name_the_file_line_and_column() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("t.csv");
        std::fs::write(&p, "id,name\n1,a\n2,\n").unwrap();
        let t = CsvTable::open(&p, true).unwrap();
        let e = t.columns(&["id", "email"]).unwrap_err().to_string();
        assert!(
            e.contains("t.csv") && e.contains("missing column `email`"),
            "{e}"
        );
        assert!(e.contains("found `id`, `name`"), "{e}");
        let mut t = CsvTable::open(&p, true).unwrap();
        let e = t
            .for_each_filled(&["id", "name"], |_, _| Ok(()))
            .unwrap_err();
        assert!(e.is_bad_input());
        assert!(e.to_string().contains("line 3: empty `name`"), "{e}");
        let missing = CsvTable::open(&dir.path().join("none.csv"), true).unwrap_err();
        assert!(missing.is_bad_input());
    }
}
