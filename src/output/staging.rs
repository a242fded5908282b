//! The output folder: one complete run's files in, switched into place as a whole.
//!
//! In: an output folder path and the files of one run, written through [`Staging`].
//! Out: the folder holds the new run's files, or (after any failure, including `kill -9`
//! at any instant) still the previous run's files; never a mix.
//!
//! # Layout
//!
//! ```text
//! OUT/
//!   .samekey.lock                  held (flock) by the one run writing OUT
//!   .samekey/runs/<run id>/        the current run's files and manifest.json
//!   .samekey/runs/.partial-<id>/   a run being written (removed at the next start)
//!   current -> .samekey/runs/<id>  the switch: one atomic rename of a symbolic link
//!   crosswalk.csv -> current/crosswalk.csv   one link per file of the current run
//!   ...
//! ```
//!
//! A run writes its files into a fresh `.partial-<id>` folder, fsyncs them, writes
//! `manifest.json` (run id, and per file its size, header and row count), renames the
//! folder to `<id>` and then replaces the `current` link with one `rename(2)`, which is
//! atomic. The top-level links go through `current`, so they switch with it. The previous
//! run's folder is kept until the switch and removed after it. Readers see either the
//! old set or the new set.
//!
//! Only one run writes a folder at a time: [`Staging::new`] takes an exclusive `flock`
//! on `OUT/.samekey.lock`; the kernel releases it when the holder exits or is killed, so
//! a lock is never left behind. A second writer is refused with a clear error (exit 2).
//! Leftovers of killed runs (partial folders, unswitched complete folders, temporary
//! links, staging folders of older versions) are removed by the next run that takes the
//! lock.

use std::fs::File;
use std::io::Write;
use std::path::{Path, PathBuf};

use crate::csvio::{CsvChunk, CsvWriter};
use crate::error::{Error, Result};

/// Name of the lock file inside the output folder.
pub const LOCK_FILE: &str = ".samekey.lock";
/// Folder (inside the output folder) that holds the run folders.
pub const STORE_DIR: &str = ".samekey/runs";
/// The link that names the current run.
pub const CURRENT: &str = "current";
/// The manifest written into every run folder.
pub const MANIFEST: &str = "manifest.json";
/// Manifest format version.
pub const MANIFEST_FORMAT: &str = "samekey-run-1";

/// Environment variable read by tests only: `NAME` makes the process abort at the named
/// point of a run (see [`crash_point`]), to test what a killed run leaves behind.
pub const CRASH_ENV: &str = "SAMEKEY_TEST_CRASH_AT";

/// Abort the process (as `kill -9` would end it: no destructors, no cleanup) when the
/// test-only variable [`CRASH_ENV`] names `point`. Costs one environment lookup.
pub fn crash_point(point: &str) {
    if let Some(v) = std::env::var_os(CRASH_ENV) {
        if v == point {
            std::process::abort();
        }
    }
}

/// One file of a run, as recorded in its manifest.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct FileEntry {
    /// File name inside the run folder.
    pub name: String,
    /// Size in bytes.
    pub bytes: u64,
    /// CSV files written through [`CsvOut`]: the header line (without line end).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub header: Option<String>,
    /// CSV files written through [`CsvOut`]: data rows (records after the header).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rows: Option<u64>,
}

/// The manifest of one run: which files belong to it and what they hold.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Manifest {
    /// Always [`MANIFEST_FORMAT`].
    pub format: String,
    /// The run's id (also the run folder's name).
    pub run_id: String,
    /// When the run started, UTC, ISO 8601.
    pub started: String,
    /// The files of the run.
    pub files: Vec<FileEntry>,
    /// Facts about the run that readers check (for example a shard's index and set).
    #[serde(default)]
    pub meta: std::collections::BTreeMap<String, String>,
}

impl Manifest {
    /// Read the manifest of the run an output folder currently holds.
    pub fn read_current(out: &Path) -> Result<Manifest> {
        let path = out.join(CURRENT).join(MANIFEST);
        let text = std::fs::read_to_string(&path).map_err(|e| {
            if e.kind() == std::io::ErrorKind::NotFound {
                Error::input(
                    out,
                    format!(
                        "no complete samekey run here (`{}` is missing); run `samekey link` \
                         into this folder first",
                        Path::new(CURRENT).join(MANIFEST).display()
                    ),
                )
            } else {
                Error::io(&path, e)
            }
        })?;
        serde_json::from_str(&text)
            .map_err(|e| Error::input(&path, format!("not a samekey run manifest: {e}")))
    }

    /// A meta value.
    pub fn meta(&self, key: &str) -> Option<&str> {
        self.meta.get(key).map(String::as_str)
    }
}

/// An exclusive lock on an output folder, released when dropped or when the process ends.
#[derive(Debug)]
pub struct FolderLock {
    _file: File,
}

impl FolderLock {
    /// Take the lock on `dir` (which must exist), or say who holds it.
    pub fn take(dir: &Path) -> Result<FolderLock> {
        let path = dir.join(LOCK_FILE);
        let mut file = std::fs::OpenOptions::new()
            .read(true)
            .write(true)
            .create(true)
            .truncate(false)
            .open(&path)
            .map_err(|e| Error::write(&path, e))?;
        match try_lock(&file) {
            Ok(true) => {}
            Ok(false) => {
                let holder = std::fs::read_to_string(&path).unwrap_or_default();
                let holder = holder.trim();
                let who = if holder.is_empty() {
                    String::new()
                } else {
                    format!(" ({holder})")
                };
                return Err(Error::Usage(format!(
                    "output folder `{}` is in use by another samekey run{who}; wait for it to \
                     finish or give another --out",
                    dir.display()
                )));
            }
            Err(e) => return Err(Error::write(&path, e)),
        }
        // Who holds it, for the message a second writer gets. The lock is the flock, not
        // this text, so a stale text after a crash does no harm.
        let _ = file.set_len(0);
        let _ = writeln!(
            file,
            "pid {}, started {}",
            std::process::id(),
            utc_timestamp()
        );
        Ok(FolderLock { _file: file })
    }
}

/// Take an exclusive `flock` on `file` without waiting: `Ok(false)` when another open
/// file holds it. The kernel drops the lock when the file is closed or the process ends.
#[cfg(unix)]
fn try_lock(file: &File) -> std::io::Result<bool> {
    use std::os::unix::io::AsRawFd;
    // The one unsafe call of the output folder: std's `File::try_lock` needs a newer Rust
    // than the crate's minimum.
    // SAFETY: flock on a file descriptor this `File` owns and keeps open.
    #[allow(unsafe_code)]
    let rc = unsafe { libc::flock(file.as_raw_fd(), libc::LOCK_EX | libc::LOCK_NB) };
    if rc == 0 {
        return Ok(true);
    }
    let e = std::io::Error::last_os_error();
    if e.kind() == std::io::ErrorKind::WouldBlock {
        Ok(false)
    } else {
        Err(e)
    }
}

/// Without `flock`, no lock: a second writer is not refused on this platform.
#[cfg(not(unix))]
fn try_lock(_file: &File) -> std::io::Result<bool> {
    Ok(true)
}

/// Check that `out` can be an output folder: it is a folder or does not exist yet, and
/// no part of its path is a file. `what` names the argument in the message (`--out`).
pub fn check_out_dir(out: &Path, what: &str) -> Result<()> {
    if out.as_os_str().is_empty() {
        return Err(Error::Usage(format!("{what} is empty; give a folder path")));
    }
    match std::fs::metadata(out) {
        Ok(m) if m.is_dir() => return Ok(()),
        Ok(_) => {
            return Err(Error::Usage(format!(
                "{what} `{}` is a file, but it must be a folder (created if missing); give \
                 a folder path",
                out.display()
            )))
        }
        Err(_) => {}
    }
    // Not there yet: the nearest existing ancestor must be a folder.
    let mut p = out.parent();
    while let Some(dir) = p {
        if dir.as_os_str().is_empty() {
            break;
        }
        if let Ok(m) = std::fs::metadata(dir) {
            if !m.is_dir() {
                return Err(Error::Usage(format!(
                    "{what} `{}` lies under `{}`, which is a file; give a folder path",
                    out.display(),
                    dir.display()
                )));
            }
            break;
        }
        p = dir.parent();
    }
    Ok(())
}

/// A fresh run folder for one run's outputs; [`Staging::commit`] switches it into place.
///
/// Create it before reading any input, so the output folder is checked and locked
/// before the work starts; dropping it without a commit removes the partial folder and
/// leaves the previous outputs as they were.
#[derive(Debug)]
pub struct Staging {
    out: PathBuf,
    runs: PathBuf,
    dir: PathBuf,
    run_id: String,
    started: String,
    files: Vec<String>,
    counted: Counted,
    meta: std::collections::BTreeMap<String, String>,
    _lock: FolderLock,
}

impl Staging {
    /// Check and lock the output folder (created if missing), remove leftovers of killed
    /// runs, and create a fresh run folder for a run's outputs (`link`, `merge`).
    pub fn new(out: &Path) -> Result<Staging> {
        Staging::of_kind(out, "outputs")
    }

    /// Like [`Staging::new`] for a folder of another kind of files (`synth` writes
    /// `"data"`): a folder holds one kind, so that one command's run never replaces
    /// another command's files.
    pub fn of_kind(out: &Path, kind: &str) -> Result<Staging> {
        check_out_dir(out, "--out")?;
        std::fs::create_dir_all(out).map_err(|e| Error::write(out, e))?;
        let lock = FolderLock::take(out)?;
        let runs = out.join(STORE_DIR);
        std::fs::create_dir_all(&runs).map_err(|e| Error::write(&runs, e))?;
        clean_leftovers(out, &runs)?;
        if let Ok(m) = Manifest::read_current(out) {
            let was = m.meta("kind").unwrap_or("outputs");
            if was != kind {
                return Err(Error::Usage(format!(
                    "output folder `{}` holds {was} of an earlier samekey run, not {kind}; \
                     give another --out folder so they are not replaced",
                    out.display()
                )));
            }
        }
        let started = utc_timestamp();
        let mut run_id = new_run_id();
        while runs.join(&run_id).exists() {
            run_id = new_run_id();
        }
        let dir = runs.join(format!(".partial-{run_id}"));
        std::fs::create_dir(&dir).map_err(|e| Error::write(&dir, e))?;
        let mut meta = std::collections::BTreeMap::new();
        meta.insert("kind".to_string(), kind.to_string());
        Ok(Staging {
            out: out.to_path_buf(),
            runs,
            dir,
            run_id,
            started,
            files: Vec::new(),
            counted: Counted::default(),
            meta,
            _lock: lock,
        })
    }

    /// Names of the files staged so far, in staging order.
    pub fn files(&self) -> &[String] {
        &self.files
    }

    /// This run's id (recorded in its manifest).
    pub fn run_id(&self) -> &str {
        &self.run_id
    }

    /// Record a fact about the run in its manifest (`meta`).
    pub fn set_meta(&mut self, key: &str, value: impl Into<String>) {
        self.meta.insert(key.to_string(), value.into());
    }

    /// Path of a staged file called `name`; it becomes part of the run on commit.
    pub fn path(&mut self, name: &str) -> PathBuf {
        if !self.files.iter().any(|f| f == name) {
            self.files.push(name.to_string());
        }
        self.dir.join(name)
    }

    /// A buffered CSV writer for the staged file `name`; [`CsvOut::finish`] flushes it
    /// and records its header and row count for the manifest.
    pub fn csv(&mut self, name: &str) -> Result<CsvOut> {
        let path = self.path(name);
        Ok(CsvOut {
            name: name.to_string(),
            w: CsvWriter::create(&path)?,
            header: None,
            counted: self.counted.clone(),
        })
    }

    /// Make the run durable and switch it into place: fsync every file and the folder,
    /// write the manifest, rename the folder to its run id, switch `current` to it (one
    /// atomic rename), update the top-level links and remove the previous run.
    pub fn commit(mut self) -> Result<Vec<PathBuf>> {
        crash_point("before-commit");
        let mut entries = Vec::with_capacity(self.files.len());
        for name in &self.files {
            let path = self.dir.join(name);
            let file = File::open(&path).map_err(|e| {
                Error::Internal(format!("staged file `{}` is missing: {e}", path.display()))
            })?;
            file.sync_all().map_err(|e| Error::write(&path, e))?;
            let bytes = file.metadata().map_err(|e| Error::write(&path, e))?.len();
            let counted = self
                .counted
                .lock()
                .ok()
                .and_then(|c| c.iter().rev().find(|e| &e.name == name).cloned());
            let counted = counted.as_ref();
            entries.push(FileEntry {
                name: name.clone(),
                bytes,
                header: counted.and_then(|c| c.header.clone()),
                rows: counted.and_then(|c| c.rows),
            });
        }
        let manifest = Manifest {
            format: MANIFEST_FORMAT.to_string(),
            run_id: self.run_id.clone(),
            started: self.started.clone(),
            files: entries,
            meta: std::mem::take(&mut self.meta),
        };
        let mpath = self.dir.join(MANIFEST);
        let text = serde_json::to_string_pretty(&manifest)
            .map_err(|e| Error::Internal(format!("manifest: {e}")))?;
        write_synced(&mpath, text.as_bytes())?;
        sync_dir(&self.dir)?;
        crash_point("before-rename");
        let done = self.runs.join(&self.run_id);
        std::fs::rename(&self.dir, &done).map_err(|e| Error::write(&done, e))?;
        self.dir = done.clone();
        sync_dir(&self.runs)?;
        crash_point("before-switch");

        let previous = current_run(&self.out);
        // Files of an older samekey (plain files, not links) would sit beside the new
        // links and mix two runs: remove them before the switch.
        let mut names: Vec<String> = self.files.clone();
        names.push(MANIFEST.to_string());
        for name in KNOWN_OUTPUTS
            .iter()
            .map(|s| s.to_string())
            .chain(names.clone())
        {
            let p = self.out.join(&name);
            if let Ok(m) = std::fs::symlink_metadata(&p) {
                if m.is_file() {
                    std::fs::remove_file(&p).map_err(|e| Error::write(&p, e))?;
                }
            }
        }
        let target = Path::new(STORE_DIR).join(&self.run_id);
        replace_link(&self.out, CURRENT, &target)?;
        sync_dir(&self.out)?;
        crash_point("after-switch");

        // Top-level links through `current` (they switch with it): add the missing ones,
        // drop those whose file the current run does not have.
        for name in &names {
            let want = Path::new(CURRENT).join(name);
            let p = self.out.join(name);
            if std::fs::read_link(&p).ok().as_deref() != Some(want.as_path()) {
                replace_link(&self.out, name, &want)?;
            }
            crash_point("between-links");
        }
        remove_stale_links(&self.out, &names)?;
        sync_dir(&self.out)?;
        if let Some(prev) = previous.filter(|p| p != &self.run_id) {
            let _ = std::fs::remove_dir_all(self.runs.join(prev));
        }
        let out = self.out.clone();
        // The folder is now the current run; nothing to clean up on drop.
        self.dir = PathBuf::new();
        Ok(self.files.iter().map(|f| out.join(f)).collect())
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        // After a failure, remove the partial run folder; after a commit `dir` is empty.
        if !self.dir.as_os_str().is_empty()
            && self
                .dir
                .file_name()
                .is_some_and(|n| n.to_string_lossy().starts_with(".partial-"))
        {
            let _ = std::fs::remove_dir_all(&self.dir);
        }
    }
}

/// Output file names that samekey writes or wrote, removed from the top level when a run
/// does not produce them (so an older run's file is never shown beside a newer run's).
const KNOWN_OUTPUTS: &[&str] = &[
    "crosswalk.csv",
    "pairs.csv",
    "review.csv",
    "rejects.csv",
    "refused.csv",
    "model.toml",
    "summary.json",
    MANIFEST,
];

/// The run id `current` points to, if any.
fn current_run(out: &Path) -> Option<String> {
    let target = std::fs::read_link(out.join(CURRENT)).ok()?;
    target.file_name().map(|n| n.to_string_lossy().into_owned())
}

/// Remove top-level links into `current/` whose file is not among `names`.
fn remove_stale_links(out: &Path, names: &[String]) -> Result<()> {
    let entries = std::fs::read_dir(out).map_err(|e| Error::write(out, e))?;
    for entry in entries.flatten() {
        let name = entry.file_name().to_string_lossy().into_owned();
        if name == CURRENT || names.contains(&name) {
            continue;
        }
        let p = entry.path();
        if let Ok(target) = std::fs::read_link(&p) {
            if target.starts_with(CURRENT) {
                std::fs::remove_file(&p).map_err(|e| Error::write(&p, e))?;
            }
        }
    }
    Ok(())
}

/// Remove what killed runs left: partial run folders, complete run folders that never
/// became current, temporary links, and staging folders of older versions.
fn clean_leftovers(out: &Path, runs: &Path) -> Result<()> {
    let current = current_run(out);
    for entry in std::fs::read_dir(runs)
        .map_err(|e| Error::io(runs, e))?
        .flatten()
    {
        let name = entry.file_name().to_string_lossy().into_owned();
        if Some(&name) != current.as_ref() {
            let p = entry.path();
            let _ = std::fs::remove_dir_all(&p).or_else(|_| std::fs::remove_file(&p));
        }
    }
    for entry in std::fs::read_dir(out)
        .map_err(|e| Error::io(out, e))?
        .flatten()
    {
        let name = entry.file_name().to_string_lossy().into_owned();
        let p = entry.path();
        if name.starts_with(".staging-") {
            let _ = std::fs::remove_dir_all(&p);
        } else if name.starts_with(".link-") {
            let _ = std::fs::remove_file(&p);
        }
    }
    Ok(())
}

/// Point `dir/name` at `target` atomically: a fresh link renamed over the old name.
fn replace_link(dir: &Path, name: &str, target: &Path) -> Result<()> {
    let tmp = dir.join(format!(".link-{}-{name}", std::process::id()));
    let _ = std::fs::remove_file(&tmp);
    symlink(target, &tmp).map_err(|e| Error::write(&tmp, e))?;
    let to = dir.join(name);
    std::fs::rename(&tmp, &to).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        Error::write(&to, e)
    })
}

#[cfg(unix)]
fn symlink(target: &Path, link: &Path) -> std::io::Result<()> {
    std::os::unix::fs::symlink(target, link)
}

#[cfg(not(unix))]
fn symlink(_target: &Path, _link: &Path) -> std::io::Result<()> {
    Err(std::io::Error::other(
        "samekey's output folders switch runs with symbolic links, which need a Unix system",
    ))
}

/// Write `bytes` to `path` and fsync it.
fn write_synced(path: &Path, bytes: &[u8]) -> Result<()> {
    let mut f = File::create(path).map_err(|e| Error::write(path, e))?;
    f.write_all(bytes).map_err(|e| Error::write(path, e))?;
    f.sync_all().map_err(|e| Error::write(path, e))
}

/// Fsync a folder, so the names in it (renames, new files) are durable.
pub fn sync_dir(dir: &Path) -> Result<()> {
    #[cfg(unix)]
    {
        let f = File::open(dir).map_err(|e| Error::write(dir, e))?;
        f.sync_all().map_err(|e| Error::write(dir, e))?;
    }
    #[cfg(not(unix))]
    let _ = dir;
    Ok(())
}

/// A fresh run id: the UTC time and 24 random bits, `YYYYMMDDTHHMMSSZ-xxxxxx`.
pub fn new_run_id() -> String {
    let now = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .unwrap_or_default();
    let salt = crate::util::mix64(now.as_nanos() as u64 ^ (u64::from(std::process::id()) << 32));
    format!(
        "{}-{:06x}",
        utc_timestamp().replace(['-', ':'], ""),
        salt >> 40
    )
}

/// Now as `YYYY-MM-DDTHH:MM:SSZ` (UTC).
pub fn utc_timestamp() -> String {
    crate::util::civil::utc_now()
}

/// Header and row counts of the finished CSV files of a run.
type Counted = std::sync::Arc<std::sync::Mutex<Vec<FileEntry>>>;

/// A CSV file being written into a run folder through [`CsvWriter`]. It counts
/// its rows and keeps its header for the run's manifest.
#[derive(Debug)]
pub struct CsvOut {
    name: String,
    w: CsvWriter<File>,
    header: Option<String>,
    counted: Counted,
}

impl CsvOut {
    /// Write one row; the first row written is the file's header.
    pub fn row<S: AsRef<str>>(&mut self, fields: &[S]) -> Result<()> {
        if self.header.is_none() {
            let mut chunk = CsvChunk::default();
            chunk.row(fields.iter().map(|f| f.as_ref()));
            let (bytes, _) = chunk.into_bytes(self.w.path())?;
            let mut h = String::from_utf8_lossy(&bytes).into_owned();
            while h.ends_with(['\n', '\r']) {
                h.pop();
            }
            self.header = Some(h);
        }
        self.w.row(fields.iter().map(|f| f.as_ref()))
    }

    /// Write rows formatted elsewhere (e.g. on worker threads), after the rows so far.
    pub fn append(&mut self, chunk: CsvChunk) -> Result<()> {
        self.w.append(chunk)
    }

    /// Flush and fsync; records the file's header and row count for the manifest.
    pub fn finish(self) -> Result<()> {
        let path = self.w.path().to_path_buf();
        let rows = self.w.records().saturating_sub(1);
        let file = self.w.into_inner()?;
        file.sync_all().map_err(|e| Error::write(&path, e))?;
        let bytes = file.metadata().map_err(|e| Error::write(&path, e))?.len();
        let entry = FileEntry {
            name: self.name,
            bytes,
            header: self.header,
            rows: Some(rows),
        };
        if let Ok(mut c) = self.counted.lock() {
            c.push(entry);
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn write(st: &mut Staging, name: &str, rows: &[&[&str]]) {
        let mut w = st.csv(name).unwrap();
        for r in rows {
            w.row(r).unwrap();
        }
        w.finish().unwrap();
    }

    #[test]
    fn staged_files_appear_only_on_commit() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path().join("out");
        let mut st = Staging::new(&out).unwrap();
        write(&mut st, "crosswalk.csv", &[&["h"], &["old"]]);
        st.commit().unwrap();
        {
            let mut st = Staging::new(&out).unwrap();
            write(&mut st, "crosswalk.csv", &[&["h"], &["new"]]);
            // Dropped without commit: a failed run.
        }
        assert_eq!(
            std::fs::read_to_string(out.join("crosswalk.csv")).unwrap(),
            "h\nold\n"
        );
        let mut st = Staging::new(&out).unwrap();
        write(&mut st, "crosswalk.csv", &[&["h"], &["new"]]);
        st.commit().unwrap();
        assert_eq!(
            std::fs::read_to_string(out.join("crosswalk.csv")).unwrap(),
            "h\nnew\n"
        );
        let runs: Vec<_> = std::fs::read_dir(out.join(STORE_DIR)).unwrap().collect();
        assert_eq!(runs.len(), 1, "previous or partial run folder left behind");
    }

    #[test]
    fn manifest_counts_rows_with_quoted_line_feeds() {
        let dir = tempfile::tempdir().unwrap();
        let mut st = Staging::new(dir.path()).unwrap();
        let mut w = st.csv("a.csv").unwrap();
        w.row(&["x", "y"]).unwrap();
        w.row(&["1", "two\nlines"]).unwrap();
        let mut chunk = CsvChunk::default();
        chunk.row(["2", "q\""]);
        chunk.row(["3", "z"]);
        w.append(chunk).unwrap();
        w.finish().unwrap();
        st.set_meta("shard", "1/2");
        let id = st.run_id().to_string();
        st.commit().unwrap();
        let m = Manifest::read_current(dir.path()).unwrap();
        assert_eq!(m.run_id, id);
        assert_eq!(m.meta("shard"), Some("1/2"));
        assert_eq!(m.files[0].rows, Some(3));
        assert_eq!(m.files[0].header.as_deref(), Some("x,y"));
        assert!(dir.path().join(MANIFEST).exists());
    }

    #[test]
    fn a_run_without_a_file_removes_its_old_link() {
        let dir = tempfile::tempdir().unwrap();
        let mut st = Staging::new(dir.path()).unwrap();
        write(&mut st, "crosswalk.csv", &[&["h"]]);
        write(&mut st, "pairs.csv", &[&["h"]]);
        st.commit().unwrap();
        let mut st = Staging::new(dir.path()).unwrap();
        write(&mut st, "pairs.csv", &[&["h"], &["shard"]]);
        st.commit().unwrap();
        assert!(std::fs::symlink_metadata(dir.path().join("crosswalk.csv")).is_err());
        assert!(dir.path().join("pairs.csv").exists());
    }

    #[test]
    fn second_writer_is_refused_while_the_first_holds_the_lock() {
        let dir = tempfile::tempdir().unwrap();
        let first = Staging::new(dir.path()).unwrap();
        let err = Staging::new(dir.path()).unwrap_err();
        assert!(err.is_bad_input());
        assert!(
            err.to_string().contains("in use by another samekey run"),
            "{err}"
        );
        drop(first);
        Staging::new(dir.path()).unwrap();
    }

    #[test]
    fn leftovers_are_removed_and_legacy_files_replaced() {
        let dir = tempfile::tempdir().unwrap();
        let out = dir.path();
        std::fs::create_dir_all(out.join(".staging-123")).unwrap();
        std::fs::write(out.join(".staging-123/pairs.csv"), "x").unwrap();
        std::fs::write(out.join("refused.csv"), "legacy").unwrap();
        std::fs::write(out.join("crosswalk.csv"), "legacy").unwrap();
        std::fs::create_dir_all(out.join(STORE_DIR).join(".partial-x")).unwrap();
        std::fs::create_dir_all(out.join(STORE_DIR).join("never-switched")).unwrap();
        let mut st = Staging::new(out).unwrap();
        assert!(!out.join(".staging-123").exists());
        assert!(!out.join(STORE_DIR).join(".partial-x").exists());
        assert!(!out.join(STORE_DIR).join("never-switched").exists());
        write(&mut st, "crosswalk.csv", &[&["h"], &["new"]]);
        st.commit().unwrap();
        assert!(
            !out.join("refused.csv").exists(),
            "legacy file beside a new run"
        );
        assert_eq!(
            std::fs::read_to_string(out.join("crosswalk.csv")).unwrap(),
            "h\nnew\n"
        );
    }

    #[test]
    fn out_paths_that_are_files_are_refused() {
        let dir = tempfile::tempdir().unwrap();
        let f = dir.path().join("file");
        std::fs::write(&f, "x").unwrap();
        let e = check_out_dir(&f, "--out").unwrap_err();
        assert!(e.to_string().contains("is a file"), "{e}");
        let e = check_out_dir(&f.join("sub/deeper"), "--out").unwrap_err();
        assert!(e.to_string().contains("which is a file"), "{e}");
        check_out_dir(&dir.path().join("new/folder"), "--out").unwrap();
    }
}
