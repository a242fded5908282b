//! The output contract: every header of every output file, pinned by a snapshot.
//!
//! The snapshot lives in `tests/snapshots/output_headers.txt`. A change of the contract
//! is deliberate: rerun with `SAMEKEY_UPDATE_SNAPSHOTS=1` and commit the new file with
//! the README's "Outputs" section.

use crate::common::*;

/// Compare `actual` with the committed snapshot `name` (or rewrite it when asked).
pub fn snapshot(name: &str, actual: &str) {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/snapshots")
        .join(name);
    if std::env::var_os("SAMEKEY_UPDATE_SNAPSHOTS").is_some() {
        std::fs::write(&path, actual).unwrap();
        return;
    }
    let want = std::fs::read_to_string(&path).unwrap_or_else(|e| {
        panic!(
            "{}: {e}; run with SAMEKEY_UPDATE_SNAPSHOTS=1",
            path.display()
        )
    });
    assert_eq!(
        want, actual,
        "output contract changed; if on purpose, rerun with SAMEKEY_UPDATE_SNAPSHOTS=1 and \
         update the README"
    );
}

fn first_line(path: &std::path::Path) -> String {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    text.lines().next().unwrap_or("").to_string()
}

fn key_paths(v: &serde_json::Value, at: &str, out: &mut Vec<String>) {
    match v {
        serde_json::Value::Object(m) => {
            for (k, x) in m {
                let p = if at.is_empty() {
                    k.clone()
                } else {
                    format!("{at}.{k}")
                };
                out.push(p.clone());
                key_paths(x, &p, out);
            }
        }
        serde_json::Value::Array(a) => {
            if let Some(x) = a.first() {
                key_paths(x, &format!("{at}[]"), out);
            }
        }
        _ => {}
    }
}

#[test]
fn every_output_header_is_pinned() {
    let dir = mini_copy();
    let o = link(dir.path(), "out", &[], None);
    assert!(o.status.success(), "{}", text(&o).1);
    let out = dir.path().join("out");
    let mut snap = String::new();
    for f in [
        "crosswalk.csv",
        "pairs.csv",
        "review.csv",
        "rejects.csv",
        "refused.csv",
    ] {
        snap.push_str(&format!("{f}: {}\n", first_line(&out.join(f))));
    }
    // summary.json: every key path (objects by key, arrays by their first element).
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let mut paths = Vec::new();
    key_paths(&summary, "", &mut paths);
    snap.push_str(&format!("summary.json: {}\n", paths.join(",")));
    snapshot("output_headers.txt", &snap);
}

#[test]
fn the_old_section_name_is_refused_with_the_new_one() {
    let dir = mini_copy();
    let spec = dir.path().join("spec.toml");
    let text_of = std::fs::read_to_string(&spec).unwrap();
    std::fs::write(&spec, text_of.replace("[decide]", "[classify]")).unwrap();
    let o = link(dir.path(), "out", &[], None);
    assert_eq!(o.status.code(), Some(2));
    let err = text(&o).1;
    assert!(
        err.contains("classify") && err.contains("[decide]"),
        "{err}"
    );
    assert!(err.contains("match_at"), "{err}");
    assert!(!dir.path().join("out").exists());
}
