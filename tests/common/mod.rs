//! Helpers shared by the integration tests.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// Path of the built binary.
pub fn bin() -> PathBuf {
    PathBuf::from(env!("CARGO_BIN_EXE_samekey"))
}

/// Folder of the small invented test data.
pub fn mini() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/mini")
}

/// Run the binary with `args` and an optional thread count.
pub fn run(args: &[&str], threads: Option<usize>) -> Output {
    let mut cmd = Command::new(bin());
    cmd.args(args);
    if let Some(t) = threads {
        cmd.env("RAYON_NUM_THREADS", t.to_string());
    }
    cmd.output().expect("cannot start samekey")
}

/// stdout and stderr of a run, as text.
pub fn text(o: &Output) -> (String, String) {
    (
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

/// Copy the mini data into a fresh temp folder and return it.
pub fn mini_copy() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    for f in ["crm.csv", "shop.csv", "spec.toml"] {
        std::fs::copy(mini().join(f), dir.path().join(f)).unwrap();
    }
    dir
}

/// Read a CSV file into rows of fields (header included).
pub fn read_csv(path: &Path) -> Vec<Vec<String>> {
    let mut r = csv::ReaderBuilder::new()
        .has_headers(false)
        .from_path(path)
        .unwrap();
    r.records()
        .map(|rec| rec.unwrap().iter().map(String::from).collect())
        .collect()
}

/// `samekey link` on `dir/spec.toml` into `dir/out`, with extra flags and threads.
pub fn link(
    dir: &std::path::Path,
    out: &str,
    extra: &[&str],
    threads: Option<usize>,
) -> std::process::Output {
    let spec = dir.join("spec.toml");
    let out = dir.join(out);
    let mut args = vec![
        "link",
        "--spec",
        spec.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    run(&args, threads)
}
