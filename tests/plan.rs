//! `samekey plan` without labels: confident matches per key and keys to add.

use crate::common::*;

#[test]
fn a_weak_spec_is_shown_the_key_that_finds_its_missing_match() {
    let dir = mini_copy();
    let spec = dir.path().join("spec.toml");
    let fit = dir.path().join("fit");
    train(dir.path(), "fit");
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

/// `plan` counts the new pairs of each key as `link` compares them (the issue: a
/// birth-date key was shown with no new pairs while `link` compared many).
#[test]
fn plan_counts_the_new_pairs_link_compares() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    let s = |p: &std::path::Path| p.to_str().unwrap().to_string();
    let o = run(
        &[
            "--quiet",
            "synth",
            "--customers",
            "1500",
            "--out",
            &s(&data),
        ],
        None,
    );
    assert!(o.status.success(), "{}", text(&o).1);
    let spec = data.join("spec.toml");
    let o = run(&["plan", "--spec", &s(&spec), "--no-model", "--json"], None);
    assert!(o.status.success(), "{}", text(&o).1);
    let plan: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let out = dir.path().join("out");
    let o = run(
        &["--quiet", "link", "--spec", &s(&spec), "--out", &s(&out)],
        None,
    );
    assert!(o.status.success(), "{}", text(&o).1);
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("summary.json")).unwrap()).unwrap();
    let linked = summary["blocking"]["keys"].as_array().unwrap();
    let planned = plan["keys"].as_array().unwrap();
    assert!(linked.len() >= 2, "{linked:?}");
    assert_eq!(planned.len(), linked.len());
    let mut later_keys_add = false;
    for (p, l) in planned.iter().zip(linked) {
        assert_eq!(p["key"], l["key"]);
        assert_eq!(p["new_pairs_exact"], true, "{p}");
        assert_eq!(p["new_pairs"].as_f64(), l["new_pairs"].as_f64(), "{p}\n{l}");
        assert_eq!(p["pairs"], l["pairs"], "{p}\n{l}");
        later_keys_add |= p != &planned[0] && l["new_pairs"].as_f64().unwrap() > 0.0;
    }
    assert!(
        later_keys_add,
        "a later key adds pairs in this data: {linked:?}"
    );
    assert_eq!(
        plan["candidate_pairs"].as_f64(),
        summary["blocking"]["candidate_pairs"].as_f64()
    );
}

/// With `--pairs linked`, pairs.csv holds no candidates: the evaluation against a truth
/// file must not report blocking measures from it (it once reported the linked pairs as
/// the candidate pairs).
#[test]
fn linked_pairs_are_not_evaluated_as_candidates() {
    let dir = mini_copy();
    let d = dir.path();
    let s = |p: &std::path::Path| p.to_str().unwrap().to_string();
    let truth = s(&mini().join("truth.csv"));
    let o = link(d, "all", &["--truth", &truth], None);
    let (all, err) = text(&o);
    assert!(o.status.success(), "{err}");
    assert!(
        all.contains("reduction ratio       0.878947 (23 candidate pairs of 190)"),
        "{all}"
    );
    let o = link(d, "linked", &["--truth", &truth, "--pairs", "linked"], None);
    let (linked, err) = text(&o);
    assert!(o.status.success(), "{err}");
    assert!(!linked.contains("reduction ratio  "), "{linked}");
    assert!(!linked.contains("pair completeness  "), "{linked}");
    assert!(
        linked.contains("reduction ratio and pair completeness need `--pairs all`"),
        "{linked}"
    );
    // The decisions are evaluated all the same.
    assert!(
        linked.contains("linked pairs          true 9, predicted 9, both 9"),
        "{linked}"
    );
}
