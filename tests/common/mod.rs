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

/// `samekey COMMAND --spec dir/spec.toml --out dir/OUT`, with extra flags and threads.
fn spec_command(
    command: &str,
    dir: &Path,
    out: &str,
    extra: &[&str],
    threads: Option<usize>,
) -> Output {
    let spec = dir.join("spec.toml");
    let out = dir.join(out);
    let mut args = vec![
        command,
        "--spec",
        spec.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ];
    args.extend_from_slice(extra);
    run(&args, threads)
}

/// `samekey link` on `dir/spec.toml` into `dir/out`, with extra flags and threads.
pub fn link(dir: &Path, out: &str, extra: &[&str], threads: Option<usize>) -> Output {
    spec_command("link", dir, out, extra, threads)
}

/// `samekey train` on `dir/spec.toml` into the folder `dir/out`, with extra flags.
pub fn train_run(dir: &Path, out: &str, extra: &[&str]) -> Output {
    spec_command("train", dir, out, extra, None)
}

/// `samekey --quiet train` into `dir/out`, which must succeed; the model file written.
pub fn train(dir: &Path, out: &str) -> PathBuf {
    let o = train_run(dir, out, &["--quiet"]);
    assert!(o.status.success(), "{}", text(&o).1);
    dir.join(out).join("model.toml")
}

/// `samekey explain` of records `a` and `b` (`source:id`) with `dir/spec.toml` and
/// `model`, with extra flags.
pub fn explain(dir: &Path, model: &Path, a: &str, b: &str, extra: &[&str]) -> Output {
    let spec = dir.join("spec.toml");
    let mut args = vec![
        "explain",
        "--spec",
        spec.to_str().unwrap(),
        "--model",
        model.to_str().unwrap(),
        a,
        b,
    ];
    args.extend_from_slice(extra);
    run(&args, None)
}
