//! Tricky pairs (invented): same customers written differently must share one key;
//! look-alike different customers (twins, parent and child, namesakes, spouses,
//! colleagues, sisters) must not. One line per pair with the reason in
//! `tests/data/tricky/{same,different}.csv`; linked with the shipped demo model.

use crate::common::*;
use std::collections::HashMap;

#[test]
fn tricky_pairs_get_the_right_keys() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let dir = root.join("tests/data/tricky");
    let out = tempfile::tempdir().unwrap();
    let model = root.join("models/demo.toml");
    let o = run(
        &[
            "--quiet",
            "link",
            "--spec",
            dir.join("spec.toml").to_str().unwrap(),
            "--model",
            model.to_str().unwrap(),
            "--out",
            out.path().to_str().unwrap(),
        ],
        None,
    );
    assert!(o.status.success(), "{}", text(&o).1);
    let keys: HashMap<(String, String), String> = read_csv(&out.path().join("crosswalk.csv"))[1..]
        .iter()
        .map(|r| ((r[0].clone(), r[1].clone()), r[2].clone()))
        .collect();
    let key = |s: &str, id: &str| keys[&(s.to_string(), id.to_string())].clone();
    let mut wrong = Vec::new();
    for (file, want_same) in [("same.csv", true), ("different.csv", false)] {
        let rows = read_csv(&dir.join(file));
        assert!(rows.len() > 5, "{file} should list pairs");
        for r in &rows[1..] {
            let same = key("crm", &r[0]) == key("webshop", &r[1]);
            if same != want_same {
                wrong.push(format!("{file}: {} / {}: {}", r[0], r[1], r[2]));
            }
        }
    }
    assert!(
        wrong.is_empty(),
        "pairs with the wrong outcome:\n{}",
        wrong.join("\n")
    );
}
