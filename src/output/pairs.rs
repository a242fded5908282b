//! `pairs.csv` and `review.csv`: scored pairs in, rows of the output contract out.

use crate::compare::Comparison;
use crate::decide::Decision;
use crate::decide::{PairSink, ScoredPair};
use crate::error::Result;
use crate::record::RecordTable;

use super::{push_field, CsvOut, Staging};

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

/// Which scored pairs go to `pairs.csv`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum PairsOutput {
    /// Every candidate pair, whatever its decision.
    #[default]
    All,
    /// Only pairs decided `match` or `review`.
    Linked,
}

/// Append the [`PAIR_COLUMNS`] fields of `p` to a CSV line (no line end).
fn push_pair_fields(line: &mut String, table: &RecordTable, p: &ScoredPair) {
    use std::fmt::Write;
    let (a, b) = (p.a as usize, p.b as usize);
    push_field(line, table.source_name(a));
    line.push(',');
    push_field(line, &table.id[a]);
    line.push(',');
    push_field(line, table.source_name(b));
    line.push(',');
    push_field(line, &table.id[b]);
    let s = &p.scored;
    let _ = write!(
        line,
        ",{:.4},{:.4},{:.6},{}",
        s.evidence,
        s.prior,
        s.probability,
        s.decision.name()
    );
}

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
    type Chunk = String;

    fn add(&self, text: &mut String, p: &ScoredPair) {
        use std::fmt::Write;
        if self.which == PairsOutput::Linked && p.decision() == Decision::NonMatch {
            return;
        }
        push_pair_fields(text, self.table, p);
        for (k, c) in self.comparison.comparators.iter().enumerate() {
            text.push(',');
            push_field(text, c.level_name(p.gamma[k]));
            let _ = write!(text, ",{:.4}", p.bits[k]);
        }
        text.push('\n');
    }

    fn flush(&mut self, text: String) -> Result<()> {
        self.out.raw(text.as_bytes())
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
        let mut line = String::new();
        for p in &self.pairs {
            use std::fmt::Write;
            line.clear();
            push_pair_fields(&mut line, table, p);
            let (a, b) = (p.a as usize, p.b as usize);
            for (k, c) in self.comparison.comparators.iter().enumerate() {
                line.push(',');
                push_field(&mut line, c.level_name(p.gamma[k]));
                let _ = write!(line, ",{:.4},", p.bits[k]);
                push_field(&mut line, table.get(a, c.attr).unwrap_or(""));
                line.push(',');
                push_field(&mut line, table.get(b, c.attr).unwrap_or(""));
            }
            line.push('\n');
            w.raw(line.as_bytes())?;
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
