//! Output: scored pairs, clusters and rejects in, the files of the output contract out.
//!
//! Every header of every output file is defined here and pinned by a snapshot test
//! (`tests/contract.rs`). The pair writers implement [`crate::score::PairSink`].
//!
//! - `crosswalk.csv`: `source,source_id,customer_key`, one row per accepted record.
//! - `pairs.csv`: [`PAIR_COLUMNS`] (`source_a,id_a,source_b,id_b,evidence_bits,
//!   prior_bits,probability,decision`), then per compared attribute `<attr>_level,
//!   <attr>_bits` ([`pairs_header`]).
//! - `review.csv`: the pairs with decision `review`, most probable first: the same
//!   columns and per attribute also the two values, `<attr>_a,<attr>_b`
//!   ([`review_header`]).
//! - `rejects.csv`: `source,line,reason` for every row that was not used.
//! - `refused.csv`: `source_a,id_a,source_b,id_b,evidence_bits,reason`: matched pairs
//!   whose merge a clustering guard refused.
//!
//! `evidence_bits` is the sum of the `<attr>_bits` of its row (each rounded to four
//! decimals before adding), and `probability` is `1 / (1 + 2^-(prior_bits +
//! evidence_bits))`.
//!
//! Files are written into a fresh run folder and switched into place as a whole only
//! when the whole run succeeded (see [`staging`]), so a failed or killed run leaves the
//! previous outputs as they were, and two runs never mix.

use std::io::Write;
use std::path::Path;

use crate::csvio::{CsvChunk, CsvWriter};
use crate::error::{Error, Result};
use crate::sources::Reject;
use crate::summary::RunSummary;

mod crosswalk;
mod pairs;
pub mod staging;

pub use staging::{CsvOut, Staging};

pub use crosswalk::{
    read_match_edges, write_clusters, write_crosswalk, write_refused, MatchEdges,
    CROSSWALK_COLUMNS, REFUSED_COLUMNS,
};
pub use pairs::{pairs_header, review_header, PairsFile, PairsOutput, ReviewFile, PAIR_COLUMNS};

/// The name of the run summary written into `link`'s output folder.
pub const SUMMARY_FILE: &str = "summary.json";

/// Stage `summary.json`: the run summary, its `outputs` naming every file of the output
/// set under `out` (`summary.json` included).
pub fn write_summary(staging: &mut Staging, summary: &mut RunSummary, out: &Path) -> Result<()> {
    let path = staging.path(SUMMARY_FILE);
    summary.outputs = staging.files().iter().map(|f| out.join(f)).collect();
    let text = serde_json::to_string_pretty(&summary.to_json())
        .map_err(|e| Error::Internal(format!("{SUMMARY_FILE}: {e}")))?;
    std::fs::write(&path, text + "\n").map_err(|e| Error::write(&path, e))
}

/// The header of `rejects.csv`.
pub const REJECT_COLUMNS: [&str; 3] = ["source", "line", "reason"];

/// Write `bytes` to `path` through a temporary file in the same folder, fsynced, and a
/// rename: a reader sees the old file or the new one, never a part.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    std::fs::create_dir_all(dir).map_err(|e| Error::write(dir, e))?;
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let tmp = dir.join(format!(".{name}.tmp-{}", std::process::id()));
    let written = (|| {
        let mut f = std::fs::File::create(&tmp)?;
        f.write_all(bytes)?;
        f.sync_all()
    })();
    if let Err(e) = written {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::write(&tmp, e));
    }
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        Error::write(path, e)
    })?;
    staging::sync_dir(dir)
}

/// The rows of `rejects.csv` (without its header, [`REJECT_COLUMNS`]).
pub fn reject_rows(rejects: &[Reject]) -> CsvChunk {
    let mut rows = CsvChunk::default();
    for r in rejects {
        rows.row([r.source.as_str(), &r.line.to_string(), r.reason.as_str()]);
    }
    rows
}

/// Write `rejects.csv` rows.
pub fn write_rejects(out: &mut CsvOut, rejects: &[Reject]) -> Result<()> {
    out.row(&REJECT_COLUMNS)?;
    out.append(reject_rows(rejects))
}

/// Write a rejects file outside a run folder (`refresh --rejects`), as one atomic write.
pub fn write_rejects_file(path: &Path, rejects: &[Reject]) -> Result<()> {
    let mut w = CsvWriter::on(path, Vec::new());
    w.row(REJECT_COLUMNS)?;
    w.append(reject_rows(rejects))?;
    write_atomic(path, &w.into_inner()?)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_rejects_file_quotes_what_needs_quoting() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("rejects.csv");
        let rejects = [Reject {
            source: "crm".into(),
            line: 7,
            reason: "3 fields, \"id\" and name\nexpected".into(),
        }];
        write_rejects_file(&path, &rejects).unwrap();
        assert_eq!(
            std::fs::read_to_string(&path).unwrap(),
            "source,line,reason\ncrm,7,\"3 fields, \"\"id\"\" and name\nexpected\"\n"
        );
    }
}
