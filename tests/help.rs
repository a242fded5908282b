//! Snapshot of the command-line help: `samekey --help` and `samekey <command> --help`
//! for every command the top-level help lists. The files under `tests/snapshots/help/`
//! pin the CLI surface; run with `UPDATE_SNAPSHOTS=1` to rewrite them after an intended
//! change (and review the diff).

use std::path::{Path, PathBuf};

use crate::common::*;

fn snapshot_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/snapshots/help")
}

/// The help text, with the checkout's path (a build-time default may hold it) written
/// as `<repo>` so that the snapshot holds in every checkout.
fn help_of(args: &[&str]) -> String {
    let o = run(args, None);
    assert_eq!(o.status.code(), Some(0), "{args:?}");
    text(&o).0.replace(env!("CARGO_MANIFEST_DIR"), "<repo>")
}

/// The command names listed under `Commands:` in the top-level help.
fn commands(top: &str) -> Vec<String> {
    top.lines()
        .skip_while(|l| !l.starts_with("Commands:"))
        .skip(1)
        .take_while(|l| l.starts_with("  "))
        .filter_map(|l| l.split_whitespace().next())
        .filter(|c| *c != "help")
        .map(String::from)
        .collect()
}

#[test]
fn help_texts_match_their_snapshots() {
    let top = help_of(&["--help"]);
    let names = commands(&top);
    assert!(
        names.len() >= 5 && names.iter().any(|c| c == "link"),
        "{names:?}"
    );
    let mut texts = vec![("samekey".to_string(), top)];
    for c in &names {
        texts.push((format!("samekey-{c}"), help_of(&[c, "--help"])));
    }
    let dir = snapshot_dir();
    let update = std::env::var_os("UPDATE_SNAPSHOTS").is_some();
    let mut changed = Vec::new();
    for (name, got) in &texts {
        let path = dir.join(format!("{name}.txt"));
        if update {
            std::fs::create_dir_all(&dir).unwrap();
            std::fs::write(&path, got).unwrap();
            continue;
        }
        let want = std::fs::read_to_string(&path).unwrap_or_default();
        if *got != want {
            changed.push(format!("{}:\n{got}", path.display()));
        }
    }
    // A snapshot without a command: the command was removed or renamed.
    if !update {
        for entry in std::fs::read_dir(&dir).unwrap() {
            let f = entry.unwrap().file_name().to_string_lossy().into_owned();
            let stem = f.trim_end_matches(".txt");
            if !texts.iter().any(|(n, _)| n == stem) {
                changed.push(format!("{f}: no such command any more"));
            }
        }
    }
    assert!(
        changed.is_empty(),
        "help changed (UPDATE_SNAPSHOTS=1 rewrites tests/snapshots/help/):\n{}",
        changed.join("\n")
    );
}
