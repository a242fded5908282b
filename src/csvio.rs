//! The CSV edge: one reader and one writer for the files samekey reads and writes beside
//! the sources (truth files, crosswalks, candidate pairs, shard pairs, synthetic data).
//!
//! In: a path. Out: rows with their line numbers, columns found by header name, and
//! errors that name the file, the line and the column; writing goes through
//! `csv::Writer` and fails as [`Error::Write`] (an internal failure), reading as bad
//! input. The sources have their own chunked, parallel reader (`sources`), which shares
//! the header lookup rule: a header names a column exactly.

use std::fs::File;
use std::io::Write;
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

/// The position of the column named `wanted` in a cleaned header (exact match): `None`
/// when no column has that name. Two columns of that name are an error (the message says
/// which columns and what to do), since either could be the one meant.
pub fn find_header(headers: &[String], wanted: &str) -> std::result::Result<Option<usize>, String> {
    let mut at = headers
        .iter()
        .enumerate()
        .filter(|(_, h)| *h == wanted)
        .map(|(i, _)| i);
    let Some(first) = at.next() else {
        return Ok(None);
    };
    let others: Vec<usize> = at.collect();
    if others.is_empty() {
        return Ok(Some(first));
    }
    let columns: Vec<String> = std::iter::once(first)
        .chain(others)
        .map(|i| (i + 1).to_string())
        .collect();
    let times = match columns.len() {
        2 => "twice".to_owned(),
        n => format!("{n} times"),
    };
    Err(format!(
        "column `{wanted}` appears {times} in the header (columns {}); rename all but one so \
         it is clear which to read",
        columns.join(" and ")
    ))
}

/// Longest value accepted in a column samekey reads, in bytes: no name, address, e-mail
/// (at most 254 octets by RFC 5321's path limit, from memory), phone or id comes near it,
/// while an opening quote without its closing quote makes one field of everything up to
/// the next quote.
pub const MAX_FIELD_BYTES: usize = 2048;

/// Most line breaks a value of a column samekey reads may hold: a written-out address
/// takes a few lines, more is a quote left open (common practice, no source).
pub const MAX_FIELD_LINE_BREAKS: usize = 4;

/// Why a row read as `fields` (the header is `headers`, the row starts on `line`) looks
/// like an opening quote without its closing quote, or `None` when it does not: a field
/// with a line break followed by a line that holds a whole row (as many delimiters as the
/// header has, less one; at least two), or, in a column that `read` marks (all columns
/// when `None`), a field longer than [`MAX_FIELD_BYTES`] or with more than
/// [`MAX_FIELD_LINE_BREAKS`] line breaks. Columns that are not read may hold long notes.
/// The reason names the field, its column and the lines it spans.
pub fn unclosed_quote<'a>(
    fields: impl IntoIterator<Item = &'a [u8]>,
    headers: &[String],
    delimiter: u8,
    line: u64,
    read: Option<&[bool]>,
) -> Option<String> {
    let row_delimiters = headers.len().saturating_sub(1).max(2);
    let mut start = line;
    for (i, f) in fields.into_iter().enumerate() {
        let name = headers.get(i).map_or("(none)", String::as_str);
        let breaks = f.iter().filter(|&&b| b == b'\n').count();
        // A field that runs to the end of the file ends with the file's last line break.
        let content = f.len()
            - f.iter()
                .rev()
                .take_while(|&&b| b == b'\n' || b == b'\r')
                .count();
        let end = start + f[..content].iter().filter(|&&b| b == b'\n').count() as u64;
        let holds_row = breaks > 0
            && f.split(|&b| b == b'\n')
                .skip(1)
                .any(|l| l.iter().filter(|&&b| b == delimiter).count() >= row_delimiters);
        let limited = read.is_none_or(|r| r.get(i).copied().unwrap_or(false));
        if holds_row || (limited && breaks > MAX_FIELD_LINE_BREAKS) {
            return Some(format!(
                "unclosed quote: field {} (column `{name}`) spans lines {start} to {end}{}; a \
                 field that opens with `\"` must close with `\"` (lines {start} to {end} were \
                 read as this one row)",
                i + 1,
                if holds_row {
                    " and holds whole rows"
                } else {
                    ""
                },
            ));
        }
        if limited && f.len() > MAX_FIELD_BYTES {
            return Some(format!(
                "field {} (column `{name}`) is {} bytes long (at most {MAX_FIELD_BYTES}): an \
                 unclosed quote, or a value that is not a customer attribute",
                i + 1,
                f.len()
            ));
        }
        start += breaks as u64;
    }
    None
}

/// Longest row read, in bytes: far beyond any customer row. It bounds the memory that an
/// opening quote without its closing quote can take: the CSV parser would otherwise read
/// the rest of the file into one field, looking for the closing quote.
pub const MAX_ROW_BYTES: u64 = 1 << 20;

/// What to say about a row (or header) longer than [`MAX_ROW_BYTES`].
pub fn row_too_long(what: &str) -> String {
    format!(
        "{what} runs past {} MiB without ending: an opening quote `\"` without its closing \
         quote? A field that opens with `\"` must close with `\"`; close or remove the quote \
         (the file cannot be read on from here)",
        MAX_ROW_BYTES >> 20
    )
}

/// A reader that fails once more than [`MAX_ROW_BYTES`] have been read past `row_start`,
/// the byte where the row being parsed began (the CSV parser reads ahead a few KiB).
/// Set `row_start` (from the parser's position) before each row is read.
#[derive(Debug)]
pub struct RowLimit<R> {
    inner: R,
    /// Bytes handed to the parser so far.
    passed: u64,
    /// Where the row being parsed began.
    pub row_start: u64,
}

impl<R> RowLimit<R> {
    /// Limit the rows read from `inner`.
    pub fn new(inner: R) -> Self {
        RowLimit {
            inner,
            passed: 0,
            row_start: 0,
        }
    }
}

/// The error a [`RowLimit`] reader fails with.
#[derive(Debug)]
struct RowTooLong;

impl std::fmt::Display for RowTooLong {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(&row_too_long("the row"))
    }
}

impl std::error::Error for RowTooLong {}

impl<R: std::io::Read> std::io::Read for RowLimit<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        if self.passed.saturating_sub(self.row_start) > MAX_ROW_BYTES {
            return Err(std::io::Error::new(
                std::io::ErrorKind::InvalidData,
                RowTooLong,
            ));
        }
        let n = self.inner.read(buf)?;
        self.passed += n as u64;
        Ok(n)
    }
}

impl RowLimit<()> {
    /// True when `e` is a [`RowLimit`] reader's failure.
    pub fn hit(e: &csv::Error) -> bool {
        matches!(e.kind(), csv::ErrorKind::Io(io) if io.get_ref().is_some_and(|x| x.is::<RowTooLong>()))
    }
}

/// An input CSV file with a header row, read row by row.
#[derive(Debug)]
pub struct CsvTable {
    path: PathBuf,
    rdr: csv::Reader<RowLimit<File>>,
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
            .flexible(true)
            .from_reader(RowLimit::new(file));
        let headers = rdr
            .headers()
            .map_err(|source| {
                if RowLimit::hit(&source) {
                    Error::input(path, format!("line 1: {}", row_too_long("the header")))
                } else {
                    Error::Csv {
                        path: path.into(),
                        source,
                    }
                }
            })?
            .iter()
            .enumerate()
            .map(|(i, h)| clean_header(i, h))
            .collect::<Vec<String>>();
        let raw = headers.iter().map(String::as_bytes);
        if let Some(reason) = unclosed_quote(raw, &[], b',', 1, None) {
            return Err(Error::input(path, format!("line 1: {reason}")));
        }
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
                let at = find_header(&self.headers, w)
                    .map_err(|e| Error::input(&self.path, format!("line 1: {e}")))?;
                at.ok_or_else(|| {
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

    /// Calls `f(line, row)` for every data row (the header is line 1). A row whose
    /// field count differs from the header's, or that looks like an unclosed quote
    /// ([`unclosed_quote`]), is an error naming the line.
    pub fn for_each_row(
        &mut self,
        mut f: impl FnMut(u64, &csv::StringRecord) -> Result<()>,
    ) -> Result<()> {
        let mut row = csv::StringRecord::new();
        loop {
            let (line_before, row_start) = (self.rdr.position().line(), self.rdr.position().byte());
            self.rdr.get_mut().row_start = row_start;
            match self.rdr.read_record(&mut row) {
                Ok(false) => return Ok(()),
                Ok(true) => {}
                Err(source) if RowLimit::hit(&source) => {
                    return Err(Error::input(
                        &self.path,
                        format!("line {line_before}: {}", row_too_long("a row")),
                    ))
                }
                Err(source) => {
                    return Err(Error::Csv {
                        path: self.path.clone(),
                        source,
                    })
                }
            }
            let line = row.position().map_or(0, |p| p.line());
            let whole = row.as_slice();
            if whole.len() > MAX_FIELD_BYTES || whole.contains('\n') {
                let fields = row.iter().map(str::as_bytes);
                if let Some(reason) = unclosed_quote(fields, &self.headers, b',', line, None) {
                    return Err(Error::input(&self.path, format!("line {line}: {reason}")));
                }
            }
            if row.len() != self.headers.len() {
                return Err(Error::input(
                    &self.path,
                    format!(
                        "line {line}: the row has {} fields, the header has {}; check quoting \
                         and delimiters",
                        row.len(),
                        self.headers.len()
                    ),
                ));
            }
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

/// Bytes of formatted rows kept before they are written on (one large write, not many).
const WRITE_BUFFER: usize = 1 << 20;

/// An output CSV file, written through `csv::Writer` (fields quoted when needed). Rows
/// formatted elsewhere, on worker threads, come in as [`CsvChunk`]s.
#[derive(Debug)]
pub struct CsvWriter<W: Write = File> {
    path: PathBuf,
    out: W,
    /// Rows formatted but not yet written to `out`.
    pending: CsvChunk,
    /// Rows written to `out`.
    records: u64,
}

impl CsvWriter<File> {
    /// Create (or truncate) `path`.
    pub fn create(path: &Path) -> Result<CsvWriter<File>> {
        let file = File::create(path).map_err(|e| Error::write(path, e))?;
        Ok(CsvWriter::on(path, file))
    }
}

impl<W: Write> CsvWriter<W> {
    /// Write CSV into `inner`; `path` names it in errors.
    pub fn on(path: &Path, inner: W) -> CsvWriter<W> {
        CsvWriter {
            path: path.to_path_buf(),
            out: inner,
            pending: CsvChunk::default(),
            records: 0,
        }
    }

    /// Write one row.
    pub fn row<I, S>(&mut self, fields: I) -> Result<()>
    where
        I: IntoIterator<Item = S>,
        S: AsRef<[u8]>,
    {
        self.pending
            .w
            .write_record(fields)
            .map_err(|e| Error::write_csv(&self.path, e))?;
        self.pending.records += 1;
        if self.pending.w.get_ref().len() >= WRITE_BUFFER {
            self.write_pending()?;
        }
        Ok(())
    }

    /// Write the rows of a chunk after the rows written so far.
    pub fn append(&mut self, chunk: CsvChunk) -> Result<()> {
        self.write_pending()?;
        self.write_chunk(chunk)
    }

    fn write_pending(&mut self) -> Result<()> {
        let pending = std::mem::take(&mut self.pending);
        self.write_chunk(pending)
    }

    fn write_chunk(&mut self, chunk: CsvChunk) -> Result<()> {
        let (bytes, records) = chunk.into_bytes(&self.path)?;
        self.out
            .write_all(&bytes)
            .map_err(|e| Error::write(&self.path, e))?;
        self.records += records;
        Ok(())
    }

    /// Rows written so far (a header row counts as one).
    pub fn records(&self) -> u64 {
        self.records + self.pending.records
    }

    /// The file (or other place) written to.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Write everything and give back the inner writer (e.g. the file, to sync it).
    pub fn into_inner(mut self) -> Result<W> {
        self.write_pending()?;
        self.out.flush().map_err(|e| Error::write(&self.path, e))?;
        Ok(self.out)
    }

    /// Write everything to the file.
    pub fn finish(self) -> Result<()> {
        self.into_inner().map(drop)
    }
}

/// Rows formatted in memory through `csv::Writer`, e.g. by one worker thread, to be
/// written in order with [`CsvWriter::append`]. Write a row field by field
/// ([`CsvChunk::field`], then [`CsvChunk::end_row`]) or whole ([`CsvChunk::row`]).
#[derive(Debug)]
pub struct CsvChunk {
    w: csv::Writer<Vec<u8>>,
    records: u64,
    /// The first failure (none is expected when writing to memory), reported on append.
    failed: Option<csv::Error>,
}

impl Default for CsvChunk {
    fn default() -> CsvChunk {
        CsvChunk {
            w: csv::WriterBuilder::new()
                .flexible(true)
                .from_writer(Vec::new()),
            records: 0,
            failed: None,
        }
    }
}

impl CsvChunk {
    fn keep(&mut self, r: std::result::Result<(), csv::Error>) {
        if let (Err(e), None) = (r, &self.failed) {
            self.failed = Some(e);
        }
    }

    /// Write one field of the current row.
    pub fn field(&mut self, value: impl AsRef<[u8]>) {
        let r = self.w.write_field(value);
        self.keep(r);
    }

    /// Write one field shown with `decimals` decimals.
    pub fn number(&mut self, value: f64, decimals: usize) {
        let mut buf = [0u8; 48];
        let mut cursor = std::io::Cursor::new(&mut buf[..]);
        if write!(cursor, "{value:.decimals$}").is_ok() {
            let n = cursor.position() as usize;
            self.field(&buf[..n]);
        } else {
            self.field(format!("{value:.decimals$}"));
        }
    }

    /// End the current row.
    pub fn end_row(&mut self) {
        let r = self.w.write_record(None::<&[u8]>);
        self.keep(r);
        self.records += 1;
    }

    /// Write one whole row.
    pub fn row<I, S>(&mut self, fields: I)
    where
        I: IntoIterator<Item = S>,
        S: AsRef<[u8]>,
    {
        let r = self.w.write_record(fields);
        self.keep(r);
        self.records += 1;
    }

    /// Rows written.
    pub fn records(&self) -> u64 {
        self.records
    }

    /// The CSV text and its number of rows (`path` names the file in an error).
    pub fn into_bytes(self, path: &Path) -> Result<(Vec<u8>, u64)> {
        if let Some(e) = self.failed {
            return Err(Error::write_csv(path, e));
        }
        let bytes = self
            .w
            .into_inner()
            .map_err(|e| Error::write(path, e.into_error()))?;
        Ok((bytes, self.records))
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

    #[test]
    fn a_column_named_twice_is_an_error_naming_both() {
        let h: Vec<String> = ["id", "name", "x", "name", "y", "y", "y"]
            .map(String::from)
            .to_vec();
        assert_eq!(find_header(&h, "id"), Ok(Some(0)));
        assert_eq!(find_header(&h, "x"), Ok(Some(2)));
        assert_eq!(find_header(&h, "z"), Ok(None));
        let e = find_header(&h, "name").unwrap_err();
        assert!(
            e.contains("`name` appears twice") && e.contains("columns 2 and 4"),
            "{e}"
        );
        let e = find_header(&h, "y").unwrap_err();
        assert!(
            e.contains("3 times") && e.contains("columns 5 and 6 and 7"),
            "{e}"
        );
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("truth.csv");
        std::fs::write(&p, "source,source_id,entity_id,source\ncrm,1,e1,crm\n").unwrap();
        let t = CsvTable::open(&p, true).unwrap();
        let e = t.columns(&["source", "source_id"]).unwrap_err();
        assert!(e.is_bad_input());
        let e = e.to_string();
        assert!(
            e.contains("truth.csv") && e.contains("line 1: column `source` appears twice"),
            "{e}"
        );
        // A repeated column that is not read is no error.
        assert_eq!(t.columns(&["source_id", "entity_id"]).unwrap(), vec![1, 2]);
    }

    #[test]
    fn an_unclosed_quote_is_an_error_with_its_lines() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("truth.csv");
        std::fs::write(
            &p,
            "source,source_id,entity_id\ncrm,1,e1\ncrm,\"2,e2\ncrm,3,e3\ncrm,4,e4\n",
        )
        .unwrap();
        let mut t = CsvTable::open(&p, true).unwrap();
        let mut seen = Vec::new();
        let e = t
            .for_each_row(|line, _| {
                seen.push(line);
                Ok(())
            })
            .unwrap_err();
        assert_eq!(seen, vec![2]);
        assert!(e.is_bad_input());
        let e = e.to_string();
        assert!(
            e.contains("truth.csv")
                && e.contains(
                    "line 3: unclosed quote: field 2 (column `source_id`) spans lines 3 to 5"
                ),
            "{e}"
        );
    }

    #[test]
    fn a_quote_never_closed_stops_within_a_mebibyte() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("truth.csv");
        let mut text = "source,source_id,entity_id\ncrm,1,e1\ncrm,\"2,e2\n".to_string();
        for i in 3..60_000 {
            text.push_str(&format!("crm,{i},entity{i}\n"));
        }
        assert!(text.len() as u64 > MAX_ROW_BYTES);
        std::fs::write(&p, &text).unwrap();
        let mut t = CsvTable::open(&p, true).unwrap();
        let e = t.for_each_row(|_, _| Ok(())).unwrap_err();
        assert!(e.is_bad_input());
        let e = e.to_string();
        assert!(
            e.contains("line 3: a row runs past 1 MiB without ending"),
            "{e}"
        );
        let rows = text.replace('"', "");
        std::fs::write(&p, format!("source,\"source_id\n{rows}")).unwrap();
        let e = CsvTable::open(&p, true).unwrap_err().to_string();
        assert!(e.contains("line 1: the header runs past 1 MiB"), "{e}");
        // A header that swallows rows is found the same way as a row that does.
        std::fs::write(&p, "source,\"source_id,entity_id\ncrm,1,e1\ncrm,\"2,e2\n").unwrap();
        let e = CsvTable::open(&p, true).unwrap_err().to_string();
        assert!(
            e.contains("line 1: unclosed quote: field 2 (column `(none)`) spans lines 1 to 3"),
            "{e}"
        );
    }

    #[test]
    fn fields_that_look_like_an_unclosed_quote() {
        let h: Vec<String> = ["id", "name", "street", "city"].map(String::from).to_vec();
        let check = |fields: &[&str]| {
            unclosed_quote(fields.iter().map(|f| f.as_bytes()), &h, b',', 10, None)
        };
        // Plain rows and a written-out address over a few lines are fine.
        assert_eq!(check(&["1", "Ann", "12 High St", "Town"]), None);
        assert_eq!(
            check(&["1", "Ann", "Flat 2\n12 High St\nEast, Side", "Town"]),
            None
        );
        // A swallowed row: the line after a break holds as many delimiters as a row.
        let r = check(&["1", "Ann, 12 High St,Town\n2,Bob,3 Low Rd,City\n", "", ""]).unwrap();
        assert!(
            r.contains("field 2 (column `name`) spans lines 10 to 11 and holds whole rows"),
            "{r}"
        );
        // Line numbers count the breaks of the fields before.
        let r = check(&["1", "a\nb", "x\ny\nz\nw\nv\nu", ""]).unwrap();
        assert!(
            r.contains("field 3 (column `street`) spans lines 11 to 16"),
            "{r}"
        );
        let long = "x".repeat(MAX_FIELD_BYTES + 1);
        let r = check(&["1", "Ann", &long, ""]).unwrap();
        assert!(
            r.contains("field 3 (column `street`) is 2049 bytes long"),
            "{r}"
        );
        assert_eq!(check(&["1", "Ann", &long[1..], ""]), None);
        // A long note or many lines in a column that is not read are no sign.
        let read = [true, true, false, true];
        let with = |fields: &[&str]| {
            unclosed_quote(
                fields.iter().map(|f| f.as_bytes()),
                &h,
                b',',
                10,
                Some(&read),
            )
        };
        assert_eq!(with(&["1", "Ann", &long, ""]), None);
        assert_eq!(with(&["1", "Ann", "a\nb\nc\nd\ne\nf\ng", ""]), None);
        assert!(with(&["1", "Ann", "a\n2,Bob,x,y", ""]).is_some());
        assert!(with(&["1", "Ann", "", &long]).is_some());
        // More fields than headers: named as such, no panic.
        let r = check(&["1", "", "", "", &long]).unwrap();
        assert!(r.contains("field 5 (column `(none)`)"), "{r}");
    }
}
