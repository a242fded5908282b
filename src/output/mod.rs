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

use crate::error::{Error, Result};
use crate::sources::Reject;

mod crosswalk;
mod pairs;
pub mod staging;

pub use staging::{CsvOut, Staging};

pub use crosswalk::{
    read_match_edges, write_crosswalk, write_refused, MatchEdges, CROSSWALK_COLUMNS,
    REFUSED_COLUMNS,
};
pub use pairs::{pairs_header, review_header, PairsFile, PairsOutput, ReviewFile, PAIR_COLUMNS};

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

/// Append `value` to a CSV line, quoting it when it holds a comma, quote or newline.
pub fn push_field(line: &mut String, value: &str) {
    if value.contains([',', '"', '\n', '\r']) {
        line.push('"');
        line.push_str(&value.replace('"', "\"\""));
        line.push('"');
    } else {
        line.push_str(value);
    }
}

/// Write `rejects.csv` rows.
pub fn write_rejects(out: &mut CsvOut, rejects: &[Reject]) -> Result<()> {
    out.row(&REJECT_COLUMNS)?;
    for r in rejects {
        out.row(&[r.source.as_str(), &r.line.to_string(), r.reason.as_str()])?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn quoting() {
        let mut s = String::new();
        push_field(&mut s, "a,b \"c\"");
        assert_eq!(s, "\"a,b \"\"c\"\"\"");
        let mut s = String::new();
        push_field(&mut s, "plain");
        assert_eq!(s, "plain");
    }
}
