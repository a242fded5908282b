//! `pairs.csv` and `review.csv`: scored pairs in, rows of the output contract out.

use crate::compare::Comparison;
use crate::decide::Decision;
use crate::decide::{PairSink, ScoredPair};
use crate::error::Result;
use crate::record::RecordTable;

use super::{CsvOut, Staging};
use crate::csvio::CsvChunk;
use crate::decide::BITS_DECIMALS;

/// The first columns of `pairs.csv` and `review.csv`.
pub const PAIR_COLUMNS: [&str; 8] = [
    "source_a",
    "id_a",
    "source_b",
    "id_b",
    "evidence_bits",
    "prior_bits",
    "probability",
    "decision",
];

/// The header of `pairs.csv`: [`PAIR_COLUMNS`], then `<attr>_level,<attr>_bits` per
/// compared attribute.
pub fn pairs_header(comparison: &Comparison) -> Vec<String> {
    let mut h: Vec<String> = PAIR_COLUMNS.iter().map(|s| s.to_string()).collect();
    for c in &comparison.comparators {
        let n = c.attr.name();
        h.extend([format!("{n}_level"), format!("{n}_bits")]);
    }
    h
}

/// The header of `review.csv`: [`PAIR_COLUMNS`], then `<attr>_level,<attr>_bits,
/// <attr>_a,<attr>_b` per compared attribute.
pub fn review_header(comparison: &Comparison) -> Vec<String> {
    let mut h: Vec<String> = PAIR_COLUMNS.iter().map(|s| s.to_string()).collect();
    for c in &comparison.comparators {
        let n = c.attr.name();
        h.extend([
            format!("{n}_level"),
            format!("{n}_bits"),
            format!("{n}_a"),
            format!("{n}_b"),
        ]);
    }
    h
}

/// Review rows formatted in memory before they are written.
const REVIEW_ROWS_PER_WRITE: usize = 4096;

/// Which scored pairs go to `pairs.csv`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum PairsOutput {
    /// Every candidate pair, whatever its decision.
    #[default]
    All,
    /// Only pairs decided `match` or `review`.
    Linked,
}

impl PairsOutput {
    /// The name `--pairs` takes and a run's manifest records.
    pub fn name(self) -> &'static str {
        match self {
            PairsOutput::All => "all",
            PairsOutput::Linked => "linked",
        }
    }
}

/// Write the [`PAIR_COLUMNS`] fields of `p` (the row is left open).
fn pair_fields(row: &mut CsvChunk, table: &RecordTable, p: &ScoredPair) {
    let (a, b) = (p.a as usize, p.b as usize);
    row.field(table.source_name(a));
    row.field(&table.id[a]);
    row.field(table.source_name(b));
    row.field(&table.id[b]);
    let s = &p.scored;
    row.number(s.evidence, BITS_DECIMALS);
    row.number(s.prior, BITS_DECIMALS);
    row.number(s.probability, PROBABILITY_DECIMALS);
    row.field(s.decision.name());
}

/// Decimals of `probability` in the files.
const PROBABILITY_DECIMALS: usize = 6;

/// `pairs.csv`: one row per scored pair (or per linked pair), in task order.
#[derive(Debug)]
pub struct PairsFile<'a> {
    out: CsvOut,
    which: PairsOutput,
    table: &'a RecordTable,
    comparison: &'a Comparison,
}

impl<'a> PairsFile<'a> {
    /// Stage `pairs.csv` and write its header.
    pub fn create(
        staging: &mut Staging,
        which: PairsOutput,
        table: &'a RecordTable,
        comparison: &'a Comparison,
    ) -> Result<PairsFile<'a>> {
        let mut out = staging.csv("pairs.csv")?;
        out.row(&pairs_header(comparison))?;
        Ok(PairsFile {
            out,
            which,
            table,
            comparison,
        })
    }

    /// Flush the file.
    pub fn finish(self) -> Result<()> {
        self.out.finish()
    }
}

impl PairSink for PairsFile<'_> {
    type Chunk = CsvChunk;

    fn add(&self, rows: &mut CsvChunk, p: &ScoredPair) {
        if self.which == PairsOutput::Linked && p.decision() == Decision::NonMatch {
            return;
        }
        pair_fields(rows, self.table, p);
        for (k, c) in self.comparison.comparators.iter().enumerate() {
            rows.field(c.level_name(p.gamma[k]));
            rows.number(p.bits[k], BITS_DECIMALS);
        }
        rows.end_row();
    }

    fn flush(&mut self, rows: CsvChunk) -> Result<()> {
        self.out.append(rows)
    }
}

/// `review.csv`: the pairs decided `review`, most probable first, with both values of
/// every compared attribute. Collects the review pairs; [`ReviewFile::write`] sorts and
/// writes them.
#[derive(Debug)]
pub struct ReviewFile<'a> {
    pairs: Vec<ScoredPair>,
    table: &'a RecordTable,
    comparison: &'a Comparison,
}

impl<'a> ReviewFile<'a> {
    /// An empty review queue.
    pub fn new(table: &'a RecordTable, comparison: &'a Comparison) -> ReviewFile<'a> {
        ReviewFile {
            pairs: Vec::new(),
            table,
            comparison,
        }
    }

    /// Review pairs collected so far.
    pub fn len(&self) -> usize {
        self.pairs.len()
    }

    /// True when no pair was decided `review`.
    pub fn is_empty(&self) -> bool {
        self.pairs.is_empty()
    }

    /// Stage `review.csv`: highest probability first, ties by record order.
    pub fn write(mut self, staging: &mut Staging) -> Result<()> {
        let mut w = staging.csv("review.csv")?;
        w.row(&review_header(self.comparison))?;
        self.pairs.sort_by(|x, y| {
            y.scored
                .log2_odds()
                .total_cmp(&x.scored.log2_odds())
                .then(x.a.cmp(&y.a))
                .then(x.b.cmp(&y.b))
        });
        let table = self.table;
        // Written in slices, so that the memory held besides the pairs stays bounded.
        for slice in self.pairs.chunks(REVIEW_ROWS_PER_WRITE) {
            let mut rows = CsvChunk::default();
            for p in slice {
                pair_fields(&mut rows, table, p);
                let (a, b) = (p.a as usize, p.b as usize);
                for (k, c) in self.comparison.comparators.iter().enumerate() {
                    rows.field(c.level_name(p.gamma[k]));
                    rows.number(p.bits[k], BITS_DECIMALS);
                    rows.field(table.get(a, c.attr).unwrap_or(""));
                    rows.field(table.get(b, c.attr).unwrap_or(""));
                }
                rows.end_row();
            }
            w.append(rows)?;
        }
        w.finish()
    }
}

impl PairSink for ReviewFile<'_> {
    type Chunk = Vec<ScoredPair>;

    fn add(&self, chunk: &mut Vec<ScoredPair>, p: &ScoredPair) {
        if p.decision() == Decision::Review {
            chunk.push(*p);
        }
    }

    fn flush(&mut self, chunk: Vec<ScoredPair>) -> Result<()> {
        self.pairs.extend(chunk);
        Ok(())
    }
}
