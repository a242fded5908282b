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
//! Files are written into a staging folder inside the output folder and moved into
//! place only when the whole run succeeded, so a failed run leaves the previous outputs
//! as they were.

use std::io::Write;
use std::path::{Path, PathBuf};

use crate::error::{Error, Result};
use crate::sources::Reject;

mod crosswalk;
mod pairs;

pub use crosswalk::{
    read_match_edges, write_crosswalk, write_refused, MatchEdges, CROSSWALK_COLUMNS,
    REFUSED_COLUMNS,
};
pub use pairs::{pairs_header, review_header, PairsFile, PairsOutput, ReviewFile, PAIR_COLUMNS};

/// The header of `rejects.csv`.
pub const REJECT_COLUMNS: [&str; 3] = ["source", "line", "reason"];

/// Write `bytes` to `path` through a temporary file in the same folder and a rename.
pub fn write_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let dir = path
        .parent()
        .filter(|p| !p.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    std::fs::create_dir_all(dir).map_err(|e| Error::io(dir, e))?;
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let tmp = dir.join(format!(".{name}.tmp-{}", std::process::id()));
    std::fs::write(&tmp, bytes).map_err(|e| Error::write(&tmp, e))?;
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        Error::write(path, e)
    })
}

/// A staging folder for one run's outputs; [`Staging::commit`] moves them into place.
#[derive(Debug)]
pub struct Staging {
    out: PathBuf,
    dir: PathBuf,
    files: Vec<String>,
}

impl Staging {
    /// Create the output folder (if needed) and a fresh staging folder inside it.
    pub fn new(out: &Path) -> Result<Staging> {
        std::fs::create_dir_all(out).map_err(|e| Error::io(out, e))?;
        let dir = out.join(format!(".staging-{}", std::process::id()));
        if dir.exists() {
            std::fs::remove_dir_all(&dir).map_err(|e| Error::io(&dir, e))?;
        }
        std::fs::create_dir(&dir).map_err(|e| Error::write(&dir, e))?;
        Ok(Staging {
            out: out.to_path_buf(),
            dir,
            files: Vec::new(),
        })
    }

    /// Path of a staged file called `name`; it is moved on commit.
    pub fn path(&mut self, name: &str) -> PathBuf {
        if !self.files.iter().any(|f| f == name) {
            self.files.push(name.to_string());
        }
        self.dir.join(name)
    }

    /// Names of the files staged so far, in staging order.
    pub fn files(&self) -> &[String] {
        &self.files
    }

    /// A buffered CSV writer for the staged file `name`.
    pub fn csv(&mut self, name: &str) -> Result<CsvOut> {
        let path = self.path(name);
        let file = std::fs::File::create(&path).map_err(|e| Error::write(&path, e))?;
        Ok(CsvOut {
            path,
            w: std::io::BufWriter::with_capacity(1 << 20, file),
        })
    }

    /// Move every staged file into the output folder and remove the staging folder.
    pub fn commit(self) -> Result<Vec<PathBuf>> {
        let mut done = Vec::new();
        for f in &self.files {
            let from = self.dir.join(f);
            let to = self.out.join(f);
            std::fs::rename(&from, &to).map_err(|e| Error::write(&to, e))?;
            done.push(to);
        }
        std::fs::remove_dir_all(&self.dir).map_err(|e| Error::write(&self.dir, e))?;
        Ok(done)
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        // After a commit the folder is gone; after a failure, clean up what was staged.
        let _ = std::fs::remove_dir_all(&self.dir);
    }
}

/// A CSV file being written; fields are quoted when needed.
#[derive(Debug)]
pub struct CsvOut {
    path: PathBuf,
    w: std::io::BufWriter<std::fs::File>,
}

impl CsvOut {
    /// Write one row.
    pub fn row<S: AsRef<str>>(&mut self, fields: &[S]) -> Result<()> {
        let mut line = String::with_capacity(64);
        for (i, f) in fields.iter().enumerate() {
            if i > 0 {
                line.push(',');
            }
            push_field(&mut line, f.as_ref());
        }
        line.push('\n');
        self.raw(line.as_bytes())
    }

    /// Write bytes that are already CSV.
    pub fn raw(&mut self, bytes: &[u8]) -> Result<()> {
        self.w
            .write_all(bytes)
            .map_err(|e| Error::write(&self.path, e))
    }

    /// Flush to disk.
    pub fn finish(mut self) -> Result<()> {
        self.w.flush().map_err(|e| Error::write(&self.path, e))
    }
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

    #[test]
    fn staged_files_appear_only_on_commit() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("crosswalk.csv"), "old").unwrap();
        {
            let mut st = Staging::new(dir.path()).unwrap();
            let mut w = st.csv("crosswalk.csv").unwrap();
            w.row(&["new"]).unwrap();
            w.finish().unwrap();
            // Dropped without commit: a failed run.
        }
        assert_eq!(
            std::fs::read_to_string(dir.path().join("crosswalk.csv")).unwrap(),
            "old"
        );
        let mut st = Staging::new(dir.path()).unwrap();
        let mut w = st.csv("crosswalk.csv").unwrap();
        w.row(&["new"]).unwrap();
        w.finish().unwrap();
        st.commit().unwrap();
        assert_eq!(
            std::fs::read_to_string(dir.path().join("crosswalk.csv")).unwrap(),
            "new\n"
        );
        let left: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
        assert_eq!(left.len(), 1, "staging folder left behind");
    }
}
