//! Sources: the CSV files a spec names in, one standardized [`RecordTable`] out.
//!
//! Each source's header is mapped onto standard attributes; the rows are read in chunks,
//! standardized in parallel and interned in file order, so the table does not depend on
//! the thread count or the chunk sizes. The three steps overlap: while chunk k is
//! standardized, chunk k+1 is read and chunk k-1 interned (each column on its own). Rows that cannot be used (ragged rows, invalid UTF-8, empty ids)
//! become [`Reject`]s with source, line and reason; nothing is dropped silently. A file
//! that is unusable as a whole (missing, empty, unknown column, duplicate ids) is an
//! error naming the file and what would fix it. A source can also be a table or query
//! in a SQLite or PostgreSQL database ([`database`]), read in batches through the same
//! standardization.

use std::io::Read;
use std::path::{Path, PathBuf};
use std::time::Duration;

use rayon::prelude::*;
use std::collections::hash_map::Entry;
use std::collections::HashMap;
use std::hash::BuildHasher;

use rustc_hash::FxBuildHasher;

use crate::error::{Error, Result};
use crate::record::{
    Attr, PassThroughHash, RecordBatch, RecordTable, RecordTableBuilder, StdRecord,
};
use crate::standardize::names::{self, NameFrequencies};
use crate::standardize::{standardize, Conventions, NameOrder, StdStats};
use crate::util::cpu::thread_cpu;
use crate::util::Progress;

pub mod database;
mod encoding;
pub use encoding::Encoding;

/// Rows read per chunk; one chunk is standardized while the next is read and the
/// previous one is interned.
const CHUNK: usize = 32 * 1024;

/// Rows standardized per parallel task.
const TASK_ROWS: usize = 1024;

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
    /// CPU time spent standardizing values, summed over threads (reading and interning
    /// not included).
    pub standardize_cpu: Duration,
}

/// One source system (a `[[source]]` entry of the spec, validated).
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
    pub encoding: Encoding,
    /// Country, date order and name order of the source.
    pub conventions: Conventions,
    /// Standard attribute → CSV header.
    pub columns: Vec<(Attr, String)>,
    /// Set for a source read from a database table or query instead of a CSV file
    /// (`path`, `delimiter` and `encoding` are then unused).
    pub database: Option<database::Database>,
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

/// Read and standardize every source, in the given order.
pub fn load(sources: &[SourceSpec]) -> Result<Loaded> {
    load_with(sources, &Progress::hidden())
}

/// [`load`], counting rows on `progress`.
pub fn load_with(sources: &[SourceSpec], progress: &Progress) -> Result<Loaded> {
    load_chunked(sources, progress, CHUNK, TASK_ROWS)
}

/// [`load_with`] with explicit chunk sizes; the result does not depend on them.
fn load_chunked(
    sources: &[SourceSpec],
    progress: &Progress,
    chunk_rows: usize,
    task_rows: usize,
) -> Result<Loaded> {
    let names = sources.iter().map(|s| s.name.clone()).collect();
    let mut builder = RecordTableBuilder::new(names);
    let mut rejects = Vec::new();
    let mut reports = Vec::new();
    let mut totals = Totals::default();
    let mut chunking = Chunking {
        chunk_rows: chunk_rows.max(1),
        task_rows: task_rows.max(1),
        buffers: Default::default(),
    };
    // Free-text names in mixed order are read with the name-word counts of the sources
    // that keep given and family names apart.
    let names = if sources
        .iter()
        .any(|s| s.conventions.name_order == NameOrder::Mixed)
    {
        Some(std::sync::Arc::new(learn_name_frequencies(sources)?))
    } else {
        None
    };
    // Phones written without a country code are also tried in the regions that the
    // other sources declare.
    let mut countries: Vec<String> = Vec::new();
    for c in sources.iter().filter_map(|s| s.conventions.country.clone()) {
        if !countries.contains(&c) {
            countries.push(c);
        }
    }
    let countries = std::sync::Arc::new(countries);
    for (i, src) in sources.iter().enumerate() {
        let mut src = src.clone();
        src.conventions.spec_countries = countries.clone();
        if src.conventions.name_order == NameOrder::Mixed {
            src.conventions.names = names.clone();
        }
        let src = &src;
        let report = load_source(
            src,
            i as u16,
            &mut builder,
            &mut rejects,
            &mut totals,
            progress,
            &mut chunking,
        )?;
        reports.push(report);
    }
    Ok(Loaded {
        table: builder.finish(),
        rejects,
        reports,
        stats: totals.stats,
        standardize_cpu: totals.cpu,
    })
}

/// Count the given-name and family-name words of every source that maps both
/// `given_name` and `family_name` (cleaned as standardization cleans them), for the
/// sources whose full names come in mixed order. Rows that cannot be read are skipped
/// here (the main read reports them).
pub fn learn_name_frequencies(sources: &[SourceSpec]) -> Result<NameFrequencies> {
    let mut freqs = NameFrequencies::default();
    for src in sources {
        let column = |a: Attr| src.columns.iter().find(|(x, _)| *x == a).map(|(_, h)| h);
        let (Some(given), Some(family)) = (column(Attr::GivenName), column(Attr::FamilyName))
        else {
            continue;
        };
        if src.database.is_some() {
            database::add_name_frequencies(src, given, family, &mut freqs)?;
            continue;
        }
        let path = src.path.as_path();
        let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
        let mut reader = open_csv(src, file, 1 << 20);
        let headers = read_headers(&mut reader, path, src.delimiter)?;
        let g_at = find_column(&headers, given, path, &src.name, "given_name")?;
        let f_at = find_column(&headers, family, path, &src.name, "family_name")?;
        let country = src.conventions.country.as_deref();
        let mut record = csv::ByteRecord::new();
        loop {
            let row_start = reader.position().byte();
            reader.get_mut().row_start = row_start;
            if !reader.read_byte_record(&mut record).unwrap_or(false) {
                break;
            }
            let field = |k: usize| record.get(k).and_then(|b| std::str::from_utf8(b).ok());
            if let Some(v) = field(g_at).and_then(|v| names::clean_name_part(v, country).0) {
                freqs.add_given(&v);
            }
            if let Some(v) = field(f_at).and_then(|v| names::clean_name_part(v, country).0) {
                freqs.add_family(&v);
            }
        }
    }
    Ok(freqs)
}

/// Standardization counts and CPU time, summed over chunks.
#[derive(Default)]
struct Totals {
    stats: StdStats,
    cpu: Duration,
}

/// Rows per chunk and per standardization task, and the chunk buffers.
struct Chunking {
    chunk_rows: usize,
    task_rows: usize,
    /// Two chunk buffers, reused from chunk to chunk and source to source.
    buffers: [RawChunk; 2],
}

/// Rows that passed the checks, waiting to be standardized: the trimmed id and mapped
/// fields of each row, in one buffer.
#[derive(Default)]
struct RawChunk {
    text: String,
    /// Per row, `1 + mapped` byte ranges into `text`: the id, then each mapped field.
    spans: Vec<(usize, usize)>,
    /// Per row, its line in the file.
    lines: Vec<u64>,
    /// Bytes of the file the chunk was read from (including rejected rows).
    bytes: u64,
}

impl RawChunk {
    fn rows(&self) -> usize {
        self.lines.len()
    }
}

/// A source file being read chunk by chunk.
struct SourceReader<'a> {
    src: &'a SourceSpec,
    reader: csv::Reader<crate::csvio::RowLimit<std::io::BufReader<Box<dyn Read + Send>>>>,
    /// Set when the file cannot be read on (a row longer than [`MAX_ROW_BYTES`]).
    fatal: Option<Error>,
    headers: Vec<String>,
    id_at: usize,
    /// Mapped columns: attribute and field index.
    mapped: Vec<(Attr, usize)>,
    /// Per column of the header, whether it is read (the id or a mapped column).
    read: Vec<bool>,
    record: csv::ByteRecord,
    report: SourceReport,
    rejects: Vec<Reject>,
    done: bool,
    /// Size of the file, bounding the buffer reserved for a chunk's text.
    file_bytes: u64,
}

impl<'a> SourceReader<'a> {
    /// Open `src`'s file (read through a buffer of `buffer` bytes), read its header and
    /// find the id and mapped columns.
    fn open(src: &'a SourceSpec, buffer: usize) -> Result<SourceReader<'a>> {
        let path = src.path.as_path();
        let file = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
        let file_bytes = file.metadata().map_or(0, |m| m.len());
        let mut reader = open_csv(src, file, buffer);
        let headers = read_headers(&mut reader, path, src.delimiter)?;
        let id_at = find_column(&headers, &src.id_column, path, &src.name, "id")?;
        let mut mapped: Vec<(Attr, usize)> = Vec::new();
        for (attr, header) in &src.columns {
            let at = find_column(&headers, header, path, &src.name, attr.name())?;
            mapped.push((*attr, at));
        }
        Ok(SourceReader {
            src,
            reader,
            read: read_columns(headers.len(), id_at, &mapped),
            headers,
            id_at,
            mapped,
            record: csv::ByteRecord::new(),
            report: SourceReport {
                name: src.name.clone(),
                ..Default::default()
            },
            rejects: Vec::new(),
            done: false,
            file_bytes,
            fatal: None,
        })
    }
}

impl SourceReader<'_> {
    fn reject(&mut self, line: u64, reason: String) {
        self.report.rejected += 1;
        self.rejects.push(Reject {
            source: self.src.name.clone(),
            line,
            reason,
        });
    }

    /// Read up to `rows` usable rows into `chunk` (cleared first, its buffers reused);
    /// rejected rows go to `self.rejects`.
    fn read_chunk(&mut self, rows: usize, mut chunk: RawChunk) -> RawChunk {
        chunk.text.clear();
        chunk.spans.clear();
        chunk.lines.clear();
        // Room for rows of up to 512 bytes (reserved, not touched): the buffer does
        // not regrow and copy itself while the first chunks are read.
        chunk
            .text
            .reserve((rows as u64 * 512).min(self.file_bytes) as usize);
        chunk.spans.reserve(rows * (1 + self.mapped.len()));
        chunk.lines.reserve(rows);
        let start_byte = self.reader.position().byte();
        while !self.done && chunk.rows() < rows {
            self.read_row(&mut chunk);
        }
        chunk.bytes = self.reader.position().byte() - start_byte;
        chunk
    }

    fn read_row(&mut self, chunk: &mut RawChunk) {
        let line_before = self.reader.position().line();
        let row_start = self.reader.position().byte();
        self.reader.get_mut().row_start = row_start;
        match self.reader.read_byte_record(&mut self.record) {
            Ok(false) => {
                self.done = true;
                return;
            }
            Ok(true) => {}
            Err(e) if crate::csvio::RowLimit::hit(&e) => {
                self.fatal = Some(Error::input(
                    &self.src.path,
                    format!(
                        "line {line_before}: {}",
                        crate::csvio::row_too_long("a row")
                    ),
                ));
                self.done = true;
                return;
            }
            Err(e) => {
                self.report.rows += 1;
                let line = e.position().map_or(line_before, |p| p.line());
                self.reject(line, format!("unreadable CSV row: {e}"));
                return;
            }
        }
        self.report.rows += 1;
        let record = &self.record;
        let line = record.position().map_or(line_before, |p| p.line());
        let slice = record.as_slice();
        if slice.len() > crate::csvio::MAX_FIELD_BYTES || slice.contains(&b'\n') {
            let (delimiter, read) = (self.src.delimiter, Some(self.read.as_slice()));
            if let Some(reason) =
                crate::csvio::unclosed_quote(record.iter(), &self.headers, delimiter, line, read)
            {
                self.reject(line, reason);
                return;
            }
        }
        if record.len() != self.headers.len() {
            let reason = format!(
                "row has {} fields, the header has {}; check quoting and delimiters",
                record.len(),
                self.headers.len()
            );
            self.reject(line, reason);
            return;
        }
        // The fields are valid UTF-8 each when the whole row is and no field boundary
        // falls inside a character.
        let slice = record.as_slice();
        let whole = match std::str::from_utf8(slice) {
            Ok(w) if slice.is_ascii() || all_on_char_boundaries(record, w) => w,
            _ => {
                let col = record
                    .iter()
                    .position(|f| std::str::from_utf8(f).is_err())
                    .unwrap_or(0);
                let reason = format!(
                    "invalid UTF-8 in column `{}` (field {}); re-export the file as UTF-8, or declare its `encoding` (e.g. \"windows-1252\") in the spec",
                    self.headers[col],
                    col + 1
                );
                self.reject(line, reason);
                return;
            }
        };
        let field = |i: usize| {
            record
                .range(i)
                .and_then(|r| whole.get(r))
                .unwrap_or_default()
                .trim()
        };
        let id = field(self.id_at);
        if id.is_empty() {
            let reason = format!("empty id in column `{}`", self.src.id_column);
            self.reject(line, reason);
            return;
        }
        let mut put = |v: &str| {
            let start = chunk.text.len();
            chunk.text.push_str(v);
            chunk.spans.push((start, chunk.text.len()));
        };
        put(id);
        for &(_, at) in &self.mapped {
            put(field(at));
        }
        chunk.lines.push(line);
    }
}

/// Per column of a header of `n` columns, whether it is the id or a mapped column.
fn read_columns(n: usize, id_at: usize, mapped: &[(Attr, usize)]) -> Vec<bool> {
    let mut read = vec![false; n];
    for at in std::iter::once(id_at).chain(mapped.iter().map(|&(_, at)| at)) {
        read[at] = true;
    }
    read
}

/// True when every field of `record` starts and ends on a character boundary of
/// `whole`, the record's bytes as a string.
fn all_on_char_boundaries(record: &csv::ByteRecord, whole: &str) -> bool {
    (0..record.len()).all(|i| {
        record
            .range(i)
            .is_some_and(|r| whole.is_char_boundary(r.start) && whole.is_char_boundary(r.end))
    })
}

fn load_source(
    src: &SourceSpec,
    index: u16,
    builder: &mut RecordTableBuilder,
    rejects: &mut Vec<Reject>,
    totals: &mut Totals,
    progress: &Progress,
    chunking: &mut Chunking,
) -> Result<SourceReport> {
    if src.database.is_some() {
        return database::load_source(src, index, builder, rejects, totals, progress, chunking);
    }
    let mut input = SourceReader::open(src, 1 << 20)?;
    let attrs: Vec<Attr> = input.mapped.iter().map(|&(a, _)| a).collect();

    let first_row = builder.len();
    let mut lines: Vec<u64> = Vec::new();
    let conv = &src.conventions;
    let [first, mut spare] = std::mem::take(&mut chunking.buffers);
    let (chunk_rows, task_rows) = (chunking.chunk_rows, chunking.task_rows);
    let mut current = input.read_chunk(chunk_rows, first);
    // Reserve for the rest of the input, estimated from the first chunk's bytes per row.
    if current.rows() > 0 && current.bytes > 0 {
        let rows =
            (input.file_bytes as f64 * current.rows() as f64 / current.bytes as f64) as usize;
        builder.expect(rows);
        lines.reserve(rows);
    }
    let mut pending: Option<Vec<RecordBatch>> = None;
    // Pipeline: read chunk k+1, standardize chunk k and intern chunk k-1 at once.
    while current.rows() > 0 || pending.is_some() {
        let rows = current.rows();
        lines.extend_from_slice(&current.lines);
        let ((next, standardized), ()) = rayon::join(
            || {
                rayon::join(
                    || input.read_chunk(chunk_rows, std::mem::take(&mut spare)),
                    || standardize_chunk(&current, &attrs, index, conv, task_rows),
                )
            },
            || {
                if let Some(batches) = pending.take() {
                    builder.append(batches);
                }
            },
        );
        let (batches, chunk_stats, chunk_cpu) = standardized;
        totals.stats.merge(&chunk_stats);
        totals.cpu += chunk_cpu;
        progress.inc(rows as u64);
        pending = (rows > 0).then_some(batches);
        spare = std::mem::replace(&mut current, next);
    }
    chunking.buffers = [current, spare];
    if let Some(e) = input.fatal.take() {
        return Err(e);
    }
    rejects.append(&mut input.rejects);
    let mut report = input.report;

    let duplicates = find_duplicates(&builder.ids()[first_row..], &lines);
    if !duplicates.is_empty() {
        let shown: Vec<String> = duplicates
            .iter()
            .take(5)
            .map(|(id, a, b)| format!("`{id}` (lines {a} and {b})"))
            .collect();
        return Err(Error::input(
            &src.path,
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

/// The raw (not yet standardized) mapped values of the row with id `id` in source
/// `src`, as written in the file (trimmed), or `None` when no usable row has that id.
/// Reads the file from the start; meant for looking at single records (`explain`).
pub fn raw_values(src: &SourceSpec, id: &str) -> Result<Option<Vec<(Attr, String)>>> {
    if src.database.is_some() {
        return database::raw_values(src, id);
    }
    let mut input = SourceReader::open(src, 64 << 10)?;
    let n = input.mapped.len();
    let attrs: Vec<Attr> = input.mapped.iter().map(|&(a, _)| a).collect();
    let mut chunk = RawChunk::default();
    loop {
        chunk = input.read_chunk(4096, chunk);
        if let Some(e) = input.fatal.take() {
            return Err(e);
        }
        if chunk.rows() == 0 {
            return Ok(None);
        }
        for row in 0..chunk.rows() {
            let span = |i: usize| {
                let (a, b) = chunk.spans[row * (1 + n) + i];
                &chunk.text[a..b]
            };
            if span(0) == id {
                return Ok(Some(
                    attrs
                        .iter()
                        .enumerate()
                        .map(|(k, a)| (*a, span(1 + k).to_string()))
                        .collect(),
                ));
            }
        }
    }
}

/// Ids seen before in `ids` (with the line of the first occurrence and the repeat's
/// line), in order of the repeats.
///
/// The ids are hashed in parallel and split into shards by hash; all copies of an id
/// fall into one shard, which is scanned in row order.
fn find_duplicates<'a>(ids: &'a [String], lines: &[u64]) -> Vec<(&'a str, u64, u64)> {
    const SHARDS: u64 = 16;
    // Bits of the hash the shard's own table does not use (hashbrown takes the low
    // bits for the slot and the top seven for the tag).
    let shard_of = |hash: u64| (hash >> 32) % SHARDS;
    let hashes: Vec<u64> = ids
        .par_iter()
        .with_min_len(4096)
        .map(|id| FxBuildHasher.hash_one(id.as_str()))
        .collect();
    let mut repeats: Vec<(usize, usize)> = (0..SHARDS)
        .into_par_iter()
        .flat_map_iter(|shard| {
            let mut first: HashMap<IdKey<'_>, usize, PassThroughHash> = HashMap::default();
            let mut repeats = Vec::new();
            for (row, (&hash, id)) in hashes.iter().zip(ids).enumerate() {
                if shard_of(hash) != shard {
                    continue;
                }
                match first.entry(IdKey { hash, id }) {
                    Entry::Occupied(e) => repeats.push((row, *e.get())),
                    Entry::Vacant(e) => {
                        e.insert(row);
                    }
                }
            }
            repeats
        })
        .collect();
    repeats.sort_unstable();
    repeats
        .into_iter()
        .map(|(row, first)| (ids[row].as_str(), lines[first], lines[row]))
        .collect()
}

/// An id with its precomputed hash.
#[derive(PartialEq, Eq)]
struct IdKey<'a> {
    hash: u64,
    id: &'a str,
}

impl std::hash::Hash for IdKey<'_> {
    fn hash<H: std::hash::Hasher>(&self, state: &mut H) {
        state.write_u64(self.hash);
    }
}

/// Standardize the rows of `chunk` in parallel, one [`RecordBatch`] per task of
/// `task_rows` rows, in row order.
fn standardize_chunk(
    chunk: &RawChunk,
    attrs: &[Attr],
    source: u16,
    conv: &Conventions,
    task_rows: usize,
) -> (Vec<RecordBatch>, StdStats, Duration) {
    let rows = chunk.rows();
    let per_row = 1 + attrs.len();
    let tasks = rows.div_ceil(task_rows);
    let results: Vec<((RecordBatch, StdStats), Duration)> = (0..tasks)
        .into_par_iter()
        .map(|t| {
            thread_cpu(|| {
                let range = t * task_rows..((t + 1) * task_rows).min(rows);
                let mut batch = RecordBatch::with_capacity(source, range.len());
                let mut stats = StdStats::default();
                let mut raw = RawRecord::default();
                for row in range {
                    let spans = &chunk.spans[row * per_row..(row + 1) * per_row];
                    let text = |k: usize| &chunk.text[spans[k].0..spans[k].1];
                    raw.fill(attrs.iter().enumerate().map(|(j, &a)| (a, text(j + 1))));
                    let record = standardize(&raw.record, conv, &mut stats);
                    batch.push(text(0).to_string(), record);
                }
                (batch, stats)
            })
        })
        .collect();
    let mut stats = StdStats::default();
    let mut cpu = Duration::ZERO;
    let batches = results
        .into_iter()
        .map(|((b, s), c)| {
            stats.merge(&s);
            cpu += c;
            b
        })
        .collect();
    (batches, stats, cpu)
}

/// A reusable raw record: refilling it keeps the strings' buffers.
#[derive(Default)]
struct RawRecord {
    record: StdRecord,
    spare: Vec<String>,
}

impl RawRecord {
    /// Set the record to the non-empty `values` (a later value of the same attribute
    /// wins; an empty value leaves the attribute as it is).
    fn fill<'a>(&mut self, values: impl Iterator<Item = (Attr, &'a str)>) {
        for slot in &mut self.record.values {
            if let Some(s) = slot.take() {
                self.spare.push(s);
            }
        }
        for (attr, v) in values {
            if v.is_empty() {
                continue;
            }
            let slot = &mut self.record.values[attr.index()];
            let mut s = match slot.take() {
                Some(s) => s,
                None => self.spare.pop().unwrap_or_default(),
            };
            s.clear();
            s.push_str(v);
            *slot = Some(s);
        }
    }
}

/// The CSV reader of a source file: header first, rows of any length (checked later),
/// the source's delimiter and encoding, and rows limited to [`MAX_ROW_BYTES`].
fn open_csv(
    src: &SourceSpec,
    file: std::fs::File,
    buffer: usize,
) -> csv::Reader<crate::csvio::RowLimit<std::io::BufReader<Box<dyn Read + Send>>>> {
    csv::ReaderBuilder::new()
        .flexible(true)
        .has_headers(true)
        .delimiter(src.delimiter)
        .from_reader(crate::csvio::RowLimit::new(
            std::io::BufReader::with_capacity(buffer, decoded(file, src.encoding)),
        ))
}

/// The file as UTF-8: as it is, or decoded from the source's single-byte encoding.
fn decoded(file: std::fs::File, encoding: Encoding) -> Box<dyn Read + Send> {
    match encoding {
        Encoding::Utf8 => Box::new(file),
        other => Box::new(encoding::Decode::new(file, other)),
    }
}

fn read_headers<R: std::io::Read>(
    reader: &mut csv::Reader<R>,
    path: &Path,
    delimiter: u8,
) -> Result<Vec<String>> {
    let raw = reader.byte_headers().map_err(|e| {
        if crate::csvio::RowLimit::hit(&e) {
            Error::input(
                path,
                format!("line 1: {}", crate::csvio::row_too_long("the header")),
            )
        } else {
            Error::Csv {
                path: path.to_path_buf(),
                source: e,
            }
        }
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
                    "line 1, column {}: the header is not valid UTF-8; re-export as UTF-8 or declare the `encoding` of the source in the spec",
                    i + 1
                ),
            )
        })?;
        headers.push(crate::csvio::clean_header(i, h));
    }
    if let Some(reason) = crate::csvio::unclosed_quote(raw.iter(), &[], delimiter, 1, None) {
        return Err(Error::input(path, format!("line 1: {reason}")));
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
    let at = crate::csvio::find_header(headers, wanted).map_err(|e| {
        Error::input(
            path,
            format!("line 1: {e} (the spec reads it as the {role} column of source `{source}`)"),
        )
    })?;
    at.ok_or_else(|| {
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spec::Spec;
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
        let got = load(&spec.sources).unwrap();
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
    fn a_character_split_by_a_delimiter_is_invalid_utf8() {
        // The row's bytes without delimiters are valid UTF-8 ("é"), its fields are not.
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(dir.path(), b"id,last,mail\n1,Sm\xc3,\xa9@x.org\n2,Ok,\n");
        let got = load(&spec.sources).unwrap();
        assert_eq!(got.table.id, vec!["2"]);
        assert_eq!(got.rejects.len(), 1);
        assert!(
            got.rejects[0].reason.contains("column `last` (field 2)"),
            "{:?}",
            got.rejects[0]
        );
    }

    #[test]
    fn unknown_column_lists_headers() {
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(dir.path(), b"id,surname,mail\n1,Smith,a@x.org\n");
        let err = load(&spec.sources).unwrap_err().to_string();
        assert!(err.contains("`last`") && err.contains("`surname`"), "{err}");
    }

    #[test]
    fn duplicate_ids_are_an_error() {
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(dir.path(), b"id,last,mail\n1,A,\n2,B,\n1,C,\n");
        let err = load(&spec.sources).unwrap_err().to_string();
        assert!(err.contains("`1` (lines 2 and 4)"), "{err}");
    }

    #[test]
    fn a_mapped_column_named_twice_is_an_error() {
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(dir.path(), b"id,last,mail,last\n1,Smith,a@x.org,Jones\n");
        let err = load(&spec.sources).unwrap_err();
        assert!(err.is_bad_input());
        let err = err.to_string();
        assert!(
            err.contains("a.csv")
                && err.contains(
                    "line 1: column `last` appears twice in the header (columns 2 and 4)"
                )
                && err.contains("family_name column of source `a`"),
            "{err}"
        );
        // An unread column named twice does not matter.
        let spec = spec_for(dir.path(), b"id,last,mail,note,note\n1,Smith,a@x.org,,\n");
        assert_eq!(load(&spec.sources).unwrap().table.len(), 1);
    }

    #[test]
    fn an_unclosed_quote_is_rejected_with_its_lines() {
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(
            dir.path(),
            b"id,last,mail\n1,Smith,a@x.org\n2,\"Jones,j@x.org\n3,Brown,b@x.org\n4,Green,g@x.org\n",
        );
        let got = load(&spec.sources).unwrap();
        assert_eq!(got.table.id, vec!["1"]);
        assert_eq!(got.rejects.len(), 1, "{:?}", got.rejects);
        assert_eq!(got.rejects[0].line, 3);
        let reason = &got.rejects[0].reason;
        assert!(
            reason.contains("unclosed quote: field 2 (column `last`) spans lines 3 to 5"),
            "{reason}"
        );
        // A quoted address over two lines is a value, not an unclosed quote.
        let spec = spec_for(
            dir.path(),
            b"id,last,mail\n1,\"Smith\nJr\",a@x.org\n2,Jones,j@x.org\n",
        );
        let got = load(&spec.sources).unwrap();
        assert_eq!(got.table.id, vec!["1", "2"]);
        assert!(got.rejects.is_empty(), "{:?}", got.rejects);
    }

    #[test]
    fn a_quote_left_open_for_more_than_a_mebibyte_stops_with_an_error() {
        let dir = tempfile::tempdir().unwrap();
        let mut csv = b"id,last,mail\n1,Smith,a@x.org\n2,\"Jones,j@x.org\n".to_vec();
        for i in 3..60_000 {
            csv.extend_from_slice(format!("{i},Name{i},n{i}@example.org\n").as_bytes());
        }
        assert!(csv.len() as u64 > crate::csvio::MAX_ROW_BYTES);
        let spec = spec_for(dir.path(), &csv);
        let err = load(&spec.sources).unwrap_err();
        assert!(err.is_bad_input());
        let err = err.to_string();
        assert!(
            err.contains("a.csv") && err.contains("line 3: a row runs past 1 MiB without ending"),
            "{err}"
        );
        // The same in the header.
        let mut csv = b"id,\"last,mail\n".to_vec();
        csv.extend(std::iter::repeat_n(
            b'x',
            crate::csvio::MAX_ROW_BYTES as usize + 10_000,
        ));
        let spec = spec_for(dir.path(), &csv);
        let err = load(&spec.sources).unwrap_err().to_string();
        assert!(err.contains("line 1: the header runs past 1 MiB"), "{err}");
        // A header that swallows rows.
        let spec = spec_for(
            dir.path(),
            b"id,\"last,mail\n1,Smith,a@x.org\n2,\"Jones,j@x.org\n",
        );
        let err = load(&spec.sources).unwrap_err().to_string();
        assert!(err.contains("line 1: unclosed quote: field 2"), "{err}");
        // Long files of ordinary rows are read on: the limit is per row.
        let mut csv = b"id,last,mail\n".to_vec();
        for i in 0..30_000 {
            csv.extend_from_slice(format!("{i},Name{i},n{i}@example.org\n").as_bytes());
        }
        let spec = spec_for(dir.path(), &csv);
        assert_eq!(load(&spec.sources).unwrap().table.len(), 30_000);
    }

    #[test]
    fn a_field_too_long_is_rejected() {
        let dir = tempfile::tempdir().unwrap();
        let long = "x".repeat(crate::csvio::MAX_FIELD_BYTES + 10);
        let csv = format!("id,last,mail\n1,{long},a@x.org\n2,Jones,j@x.org\n");
        let spec = spec_for(dir.path(), csv.as_bytes());
        let got = load(&spec.sources).unwrap();
        assert_eq!(got.table.id, vec!["2"]);
        assert!(
            got.rejects[0].reason.contains("2058 bytes long"),
            "{:?}",
            got.rejects
        );
    }

    #[test]
    fn empty_file_is_an_error() {
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(dir.path(), b"");
        let err = load(&spec.sources).unwrap_err().to_string();
        assert!(err.contains("empty"), "{err}");
    }

    #[test]
    fn missing_file_names_the_path() {
        let dir = tempfile::tempdir().unwrap();
        let spec = spec_for(dir.path(), b"id,last,mail\n");
        std::fs::remove_file(dir.path().join("a.csv")).unwrap();
        let err = load(&spec.sources).unwrap_err();
        assert!(err.is_bad_input());
        assert!(err.to_string().contains("a.csv"));
    }

    /// A small synthetic data set of three sources, with rows to reject appended to
    /// the first file.
    fn synth_spec(dir: &Path) -> Spec {
        let cfg = crate::synth::SynthConfig {
            customers: 700,
            seed: 3,
            noise: Default::default(),
        };
        crate::synth::write_dataset(&crate::synth::generate(&cfg), dir).unwrap();
        let spec = Spec::load(&dir.join("spec.toml")).unwrap();
        // Rows to reject, spread over the files (the first has no quoted newlines).
        let path = &spec.sources[0].path;
        let text = std::fs::read(path).unwrap();
        let fields = text
            .split(|&b| b == b'\n')
            .next()
            .unwrap()
            .split(|&b| b == b',')
            .count();
        let commas = ",".repeat(fields - 1);
        let bad_utf8 = [b"x\xff".as_slice(), commas.as_bytes(), b"\n"].concat();
        let empty_id = format!("{commas}\n");
        let mut out = Vec::new();
        for (i, line) in text.split_inclusive(|&b| b == b'\n').enumerate() {
            out.extend_from_slice(line);
            match i {
                5 => out.extend_from_slice(b"ragged,row\n"),
                60 => out.extend_from_slice(&bad_utf8),
                61 => out.extend_from_slice(empty_id.as_bytes()),
                _ => {}
            }
        }
        out.extend_from_slice(b"ragged,row\n\"unterminated\n");
        std::fs::write(path, out).unwrap();
        spec
    }

    fn assert_same(a: &Loaded, b: &Loaded, what: &str) {
        assert_eq!(a.table, b.table, "{what}");
        assert_eq!(a.rejects, b.rejects, "{what}");
        assert_eq!(a.reports, b.reports, "{what}");
        assert_eq!(a.stats, b.stats, "{what}");
    }

    #[test]
    fn result_does_not_depend_on_threads_or_chunk_sizes() {
        let dir = tempfile::tempdir().unwrap();
        let spec = synth_spec(dir.path());
        let run = |threads: usize, chunk: usize, task: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap()
                .install(|| load_chunked(&spec.sources, &Progress::hidden(), chunk, task))
                .unwrap()
        };
        // One row at a time on one thread is the plain sequential order.
        let reference = run(1, 1, 1);
        assert!(reference.table.len() > 1000, "{}", reference.table.len());
        let reasons: Vec<&str> = reference
            .rejects
            .iter()
            .map(|r| r.reason.as_str())
            .collect();
        assert_eq!(reasons.len(), 5, "{reasons:?}");
        for (reason, expected) in reasons
            .iter()
            .zip(["fields", "UTF-8", "empty id", "fields"])
        {
            assert!(reason.contains(expected), "{reasons:?}");
        }
        let mut last = 0;
        for (i, rows) in reference.table.source.iter().enumerate() {
            assert!(*rows >= last, "records out of source order at {i}");
            last = *rows;
        }
        for (threads, chunk, task) in [
            (1, CHUNK, TASK_ROWS),
            (2, CHUNK, TASK_ROWS),
            (2, 1, 1),
            (2, 7, 3),
            (2, 100, 1000),
            (2, 333, 17),
            (1, 64, 8),
        ] {
            let got = run(threads, chunk, task);
            assert_same(
                &got,
                &reference,
                &format!("threads {threads}, chunk {chunk}, task {task}"),
            );
        }
    }

    #[test]
    fn duplicate_ids_are_found_across_chunks() {
        let dir = tempfile::tempdir().unwrap();
        let mut csv = b"id,last,mail\n".to_vec();
        for i in 0..50 {
            csv.extend_from_slice(format!("{},N{i},\n", i % 40).as_bytes());
        }
        let spec = spec_for(dir.path(), &csv);
        for chunk in [1, 7, CHUNK] {
            let err = load_chunked(&spec.sources, &Progress::hidden(), chunk, 3)
                .unwrap_err()
                .to_string();
            assert!(
                err.contains(
                    "10 duplicate id(s) in column `id`: `0` (lines 2 and 42), `1` (lines 3 and \
                     43), `2` (lines 4 and 44), `3` (lines 5 and 45), `4` (lines 6 and 46), ..."
                ),
                "{err}"
            );
        }
    }

    mod props {
        use super::*;
        use proptest::prelude::*;

        proptest! {
            /// The sharded search finds what a plain scan in row order finds.
            #[test]
            fn find_duplicates_equals_a_plain_scan(ids in prop::collection::vec("[a-d]{1,2}", 0..200)) {
                let lines: Vec<u64> = (0..ids.len() as u64).map(|i| i * 3 + 2).collect();
                let mut first: HashMap<&str, u64> = HashMap::new();
                let mut expected = Vec::new();
                for (id, &line) in ids.iter().zip(&lines) {
                    match first.get(id.as_str()) {
                        Some(&f) => expected.push((id.as_str(), f, line)),
                        None => {
                            first.insert(id, line);
                        }
                    }
                }
                prop_assert_eq!(find_duplicates(&ids, &lines), expected);
            }
        }
    }
}
