//! Sources: the CSV files a spec names in, one standardized [`RecordTable`] out.
//!
//! Each source's header is mapped onto standard attributes; the rows are read in chunks,
//! standardized in parallel and interned in file order, so the table does not depend on
//! the thread count. Rows that cannot be used (ragged rows, invalid UTF-8, empty ids)
//! become [`Reject`]s with source, line and reason; nothing is dropped silently. A file
//! that is unusable as a whole (missing, empty, unknown column, duplicate ids) is an
//! error naming the file and what would fix it.

use std::collections::HashMap;
use std::path::Path;

use rayon::prelude::*;

use crate::error::{Error, Result};
use crate::record::{Attr, RecordTable, RecordTableBuilder, StdRecord};
use crate::spec::{SourceSpec, Spec};
use crate::standardize::{standardize, StdStats};
use crate::util::Progress;

/// Rows standardized per parallel chunk.
const CHUNK: usize = 32 * 1024;

/// A row that was not used, with the reason.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Reject {
    /// Source name.
    pub source: String,
    /// Line number in the file (the header is line 1).
    pub line: u64,
    /// Why the row was rejected.
    pub reason: String,
}

/// What happened to one source.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct SourceReport {
    /// Source name.
    pub name: String,
    /// Data rows read (accepted + rejected).
    pub rows: u64,
    /// Rows that became records.
    pub accepted: u64,
    /// Rows written to the rejects file.
    pub rejected: u64,
}

/// All sources of a spec, read and standardized.
#[derive(Debug)]
pub struct Loaded {
    /// The records.
    pub table: RecordTable,
    /// Rejected rows, in source and line order.
    pub rejects: Vec<Reject>,
    /// One report per source, in spec order.
    pub reports: Vec<SourceReport>,
    /// Standardization counts over all sources.
    pub stats: StdStats,
}

/// Read and standardize every source of `spec`.
pub fn load(spec: &Spec) -> Result<Loaded> {
    load_with(spec, &Progress::hidden())
}

/// [`load`], counting rows on `progress`.
pub fn load_with(spec: &Spec, progress: &Progress) -> Result<Loaded> {
    let names = spec.sources.iter().map(|s| s.name.clone()).collect();
    let mut builder = RecordTableBuilder::new(names);
    let mut rejects = Vec::new();
    let mut reports = Vec::new();
    let mut stats = StdStats::default();
    for (i, src) in spec.sources.iter().enumerate() {
        let report = load_source(
            src,
            i as u16,
            &mut builder,
            &mut rejects,
            &mut stats,
            progress,
        )?;
        reports.push(report);
    }
    Ok(Loaded {
        table: builder.finish(),
        rejects,
        reports,
        stats,
    })
}

/// A row that passed the checks, waiting to be standardized.
struct RawRow {
    id: String,
    raw: StdRecord,
}

fn load_source(
    src: &SourceSpec,
    index: u16,
    builder: &mut RecordTableBuilder,
    rejects: &mut Vec<Reject>,
    stats: &mut StdStats,
    progress: &Progress,
) -> Result<SourceReport> {
    let path = src.path.as_path();
    let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let mut reader = csv::ReaderBuilder::new()
        .flexible(true)
        .has_headers(true)
        .from_reader(std::io::BufReader::with_capacity(1 << 20, file));
    let headers = read_headers(&mut reader, path)?;
    let id_at = find_column(&headers, &src.id_column, path, &src.name, "id")?;
    let mut mapped: Vec<(Attr, usize, &str)> = Vec::new();
    for (attr, header) in &src.columns {
        let at = find_column(&headers, header, path, &src.name, attr.name())?;
        mapped.push((*attr, at, header.as_str()));
    }

    let mut report = SourceReport {
        name: src.name.clone(),
        ..Default::default()
    };
    let mut first_line: HashMap<String, u64> = HashMap::new();
    let mut duplicates: Vec<(String, u64, u64)> = Vec::new();
    let mut chunk: Vec<RawRow> = Vec::with_capacity(CHUNK);
    let mut record = csv::ByteRecord::new();
    let mut reject = |line: u64, reason: String, report: &mut SourceReport| {
        report.rejected += 1;
        rejects.push(Reject {
            source: src.name.clone(),
            line,
            reason,
        });
    };
    loop {
        let line_before = reader.position().line();
        match reader.read_byte_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {}
            Err(e) => {
                report.rows += 1;
                let line = e.position().map_or(line_before, |p| p.line());
                reject(line, format!("unreadable CSV row: {e}"), &mut report);
                continue;
            }
        }
        report.rows += 1;
        let line = record.position().map_or(line_before, |p| p.line());
        if record.len() != headers.len() {
            let reason = format!(
                "row has {} fields, the header has {}; check quoting and delimiters",
                record.len(),
                headers.len()
            );
            reject(line, reason, &mut report);
            continue;
        }
        if let Some((col, _)) = record
            .iter()
            .enumerate()
            .find(|(_, f)| std::str::from_utf8(f).is_err())
        {
            let reason = format!(
                "invalid UTF-8 in column `{}` (field {}); re-export the file as UTF-8",
                headers[col],
                col + 1
            );
            reject(line, reason, &mut report);
            continue;
        }
        let field = |i: usize| std::str::from_utf8(&record[i]).unwrap_or_default().trim();
        let id = field(id_at);
        if id.is_empty() {
            let reason = format!("empty id in column `{}`", src.id_column);
            reject(line, reason, &mut report);
            continue;
        }
        if let Some(&first) = first_line.get(id) {
            duplicates.push((id.to_string(), first, line));
            continue;
        }
        first_line.insert(id.to_string(), line);
        let mut raw = StdRecord::default();
        for &(attr, at, _) in &mapped {
            let v = field(at);
            if !v.is_empty() {
                raw.set(attr, Some(v.to_string()));
            }
        }
        chunk.push(RawRow {
            id: id.to_string(),
            raw,
        });
        if chunk.len() == CHUNK {
            progress.inc(CHUNK as u64);
            flush(&mut chunk, src, index, builder, stats);
        }
    }
    flush(&mut chunk, src, index, builder, stats);
    if !duplicates.is_empty() {
        let shown: Vec<String> = duplicates
            .iter()
            .take(5)
            .map(|(id, a, b)| format!("`{id}` (lines {a} and {b})"))
            .collect();
        return Err(Error::input(
            path,
            format!(
                "{} duplicate id(s) in column `{}`: {}{}; ids must be unique within a source \
                 (remove the repeated rows or map a different id column)",
                duplicates.len(),
                src.id_column,
                shown.join(", "),
                if duplicates.len() > 5 { ", ..." } else { "" }
            ),
        ));
    }
    report.accepted = report.rows - report.rejected;
    Ok(report)
}

fn read_headers<R: std::io::Read>(reader: &mut csv::Reader<R>, path: &Path) -> Result<Vec<String>> {
    let raw = reader.byte_headers().map_err(|e| Error::Csv {
        path: path.to_path_buf(),
        source: e,
    })?;
    if raw.is_empty() || (raw.len() == 1 && raw[0].is_empty()) {
        return Err(Error::input(
            path,
            "the file is empty; expected a header line naming the columns, then one row per record",
        ));
    }
    let mut headers = Vec::with_capacity(raw.len());
    for (i, h) in raw.iter().enumerate() {
        let h = std::str::from_utf8(h).map_err(|_| {
            Error::input(
                path,
                format!(
                    "line 1, column {}: the header is not valid UTF-8; re-export as UTF-8",
                    i + 1
                ),
            )
        })?;
        let h = if i == 0 {
            h.trim_start_matches('\u{feff}')
        } else {
            h
        };
        headers.push(h.trim().to_string());
    }
    Ok(headers)
}

fn find_column(
    headers: &[String],
    wanted: &str,
    path: &Path,
    source: &str,
    role: &str,
) -> Result<usize> {
    headers.iter().position(|h| h == wanted).ok_or_else(|| {
        Error::input(
            path,
            format!(
                "column `{wanted}` (the {role} column of source `{source}` in the spec) is not in \
                 the header; the file has: {}",
                headers
                    .iter()
                    .map(|h| format!("`{h}`"))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        )
    })
}

fn flush(
    chunk: &mut Vec<RawRow>,
    src: &SourceSpec,
    index: u16,
    builder: &mut RecordTableBuilder,
    stats: &mut StdStats,
) {
    if chunk.is_empty() {
        return;
    }
    let conv = &src.conventions;
    let (records, chunk_stats) = chunk
        .par_iter()
        .with_min_len(256)
        .fold(
            || (Vec::new(), StdStats::default()),
            |(mut v, mut st), row| {
                v.push(standardize(&row.raw, conv, &mut st));
                (v, st)
            },
        )
        .reduce(
            || (Vec::new(), StdStats::default()),
            |(mut a, mut sa), (b, sb)| {
                a.extend(b);
                sa.merge(&sb);
                (a, sa)
            },
        );
    stats.merge(&chunk_stats);
    for (row, rec) in chunk.drain(..).zip(records) {
        builder.push(index, row.id, rec);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::io::Write;

    fn spec_for(dir: &Path, csv: &[u8]) -> Spec {
        std::fs::File::create(dir.join("a.csv"))
            .unwrap()
            .write_all(csv)
            .unwrap();
        let text = r#"
version = 1
[[source]]
name = "a"
path = "a.csv"
id = "id"
[source.columns]
family_name = "last"
email = "mail"
[[compare]]
attribute = "family_name"
levels = ["exact"]
[[block]]
name = "b"
keys = ["family_name"]
"#;
        Spec::parse(text, &dir.join("spec.toml")).unwrap()
    }

    #[test]
    fn reads_rows_and_rejects_bad_ones() {
        let dir = tempfile::tempdir().unwrap();
        let mut data = b"\xef\xbb\xbfid,last,mail\n1,Smith,a@x.org\n2,Jones\n3,M\xfcller,m@x.org\n,Empty,e@x.org\n5,\"Quoted, Name\",q@x.org\n".to_vec();
        data.extend_from_slice(b"6,Brown,b@x.org\n");
        let spec = spec_for(dir.path(), &data);
        let got = load(&spec).unwrap();
        assert_eq!(got.table.len(), 3);
        assert_eq!(got.table.id, vec!["1", "5", "6"]);
        let lines: Vec<u64> = got.rejects.iter().map(|r| r.line).collect();
        assert_eq!(lines, vec![3, 4, 5]);
        assert!(
            got.rejects[0].reason.contains("2 fields"),
            "{:?}",
            got.rejects[0]
        );
        assert!(
            got.rejects[1].reason.contains("UTF-8"),
            "{:?}",
            got.rejects[1]
        );
        assert!(
            got.rejects[2].reason.contains("empty id"),
            "{:?}",
            got.rejects[2]
        );
        assert_eq!(
            got.reports[0],
            SourceReport {
                name: "a".into(),
                rows: 6,
                accepted: 3,
                rejected: 3
            }
        );
    }

    #[test]
    fn unknown_column_lists_headers() {
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(dir.path(), b"id,surname,mail\n1,Smith,a@x.org\n");
        let err = load(&spec).unwrap_err().to_string();
        assert!(err.contains("`last`") && err.contains("`surname`"), "{err}");
    }

    #[test]
    fn duplicate_ids_are_an_error() {
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(dir.path(), b"id,last,mail\n1,A,\n2,B,\n1,C,\n");
        let err = load(&spec).unwrap_err().to_string();
        assert!(err.contains("`1` (lines 2 and 4)"), "{err}");
    }

    #[test]
    fn empty_file_is_an_error() {
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(dir.path(), b"");
        let err = load(&spec).unwrap_err().to_string();
        assert!(err.contains("empty"), "{err}");
    }

    #[test]
    fn missing_file_names_the_path() {
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(dir.path(), b"id,last,mail\n");
        std::fs::remove_file(dir.path().join("a.csv")).unwrap();
        let err = load(&spec).unwrap_err();
        assert!(err.is_bad_input());
        assert!(err.to_string().contains("a.csv"));
    }
}
