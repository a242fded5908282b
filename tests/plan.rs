//! `samekey plan` without labels: confident matches per key and keys to add.

use crate::common::*;

#[test]
fn a_weak_spec_is_shown_the_key_that_finds_its_missing_match() {
    let dir = mini_copy();
    let spec = dir.path().join("spec.toml");
    let fit = dir.path().join("fit");
    let o = run(
        &[
            "--quiet",
            "train",
            "--spec",
            spec.to_str().unwrap(),
            "--out",
            fit.to_str().unwrap(),
        ],
        None,
    );
    assert!(o.status.success(), "{}", text(&o).1);
    let s = std::fs::read_to_string(&spec).unwrap();
    // Only the e-mail key: one true pair of the mini data has no e-mail in common.
    let weak = s.replace(
        "[[block]]\nname = \"postcode\"\nkeys = [\"postcode\"]\n\n",
        "",
    );
    assert_ne!(weak, s, "test setup");
    std::fs::write(&spec, weak).unwrap();
    let model = fit.join("model.toml");
    let o = run(
        &[
            "plan",
            "--spec",
            spec.to_str().unwrap(),
            "--model",
            model.to_str().unwrap(),
        ],
        None,
    );
    let (out, err) = text(&o);
    assert!(o.status.success(), "{err}");
    assert!(out.contains("share of the 8 confident matches"), "{out}");
    assert!(
        out.contains("keys that would add the most confident matches"),
        "{out}"
    );
    assert!(out.contains("+1 confident matches"), "{out}");
    // With the spec's own keys the label-free share agrees with the truth here.
    let o = run(
        &[
            "plan",
            "--spec",
            mini().join("spec.toml").to_str().unwrap(),
            "--truth",
            mini().join("truth.csv").to_str().unwrap(),
        ],
        None,
    );
    let (out, err) = text(&o);
    assert!(o.status.success(), "{err}");
    let line = out.lines().find(|l| l.starts_with("email")).unwrap();
    let cols: Vec<&str> = line.split_whitespace().collect();
    assert_eq!(
        cols[5], cols[7],
        "truth and label-free completeness: {line}"
    );
}
