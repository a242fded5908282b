//! The exit-code contract, end to end: 0 on success, 2 when the input is at fault
//! (spec, data, flags), 1 for internal failures, which include failing to write an
//! output (the input is fine; the machine is not).

use crate::common::*;

#[test]
fn success_exits_0() {
    let dir = mini_copy();
    let o = link(dir.path(), "out", &[], None);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o).1);
}

#[test]
fn bad_input_exits_2() {
    let dir = mini_copy();
    let spec = dir.path().join("spec.toml");
    let s = std::fs::read_to_string(&spec).unwrap();
    std::fs::write(&spec, s.replacen("version = 1", "version = 7", 1)).unwrap();
    let o = link(dir.path(), "out", &[], None);
    let err = text(&o).1;
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("version"), "{err}");
    // A flag clap rejects is bad input too.
    let o = run(&["link", "--no-such-flag"], None);
    assert_eq!(o.status.code(), Some(2));
}

/// A write that fails mid-run: the file-size limit (RLIMIT_FSIZE, set with `ulimit -f`)
/// makes `write` fail with EFBIG once a file grows past it, as a full disk would. SIGXFSZ
/// is ignored so that the process sees the error instead of being killed.
#[cfg(unix)]
#[test]
fn a_failing_write_exits_1() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("data");
    let script = format!(
        "trap '' XFSZ; ulimit -f 8; exec '{}' synth --customers 2000 --out '{}'",
        bin().display(),
        out.display()
    );
    let o = std::process::Command::new("sh")
        .args(["-c", &script])
        .output()
        .unwrap();
    let err = text(&o).1;
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("cannot write"), "{err}");
    assert!(!err.contains("panicked"), "{err}");
}
