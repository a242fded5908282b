//! The everyday surface: `--quiet`, `--json`, `summary.json`, `explain`, `train --out`,
//! and `demo` without the repository.

use crate::common::*;

fn s(p: &std::path::Path) -> String {
    p.to_str().unwrap().to_string()
}

fn json_of(o: &std::process::Output) -> serde_json::Value {
    let (out, err) = text(o);
    assert!(o.status.success(), "{err}");
    serde_json::from_str(&out).unwrap_or_else(|e| panic!("not JSON ({e}): {out}"))
}

#[test]
fn quiet_prints_nothing_on_success() {
    let dir = mini_copy();
    let d = dir.path();
    let spec = s(&d.join("spec.toml"));
    let model = s(&train(d, "fit"));
    let runs: Vec<Vec<String>> = vec![
        vec![
            "link".into(),
            "--spec".into(),
            spec.clone(),
            "--out".into(),
            s(&d.join("o")),
            "--timings".into(),
        ],
        vec![
            "link".into(),
            "--spec".into(),
            spec.clone(),
            "--out".into(),
            s(&d.join("j")),
            "--json".into(),
        ],
        vec!["plan".into(), "--spec".into(), spec.clone()],
        vec![
            "train".into(),
            "--spec".into(),
            spec.clone(),
            "--out".into(),
            s(&d.join("t")),
            "--json".into(),
        ],
        vec![
            "explain".into(),
            "--spec".into(),
            spec.clone(),
            "--model".into(),
            model.clone(),
            "crm:c1".into(),
            "shop:s1".into(),
        ],
        vec![
            "merge".into(),
            "--spec".into(),
            spec.clone(),
            "--out".into(),
            s(&d.join("m")),
            s(&d.join("o")),
        ],
        vec![
            "evaluate".into(),
            "--truth".into(),
            s(&mini().join("truth.csv")),
            "--crosswalk".into(),
            s(&d.join("o/crosswalk.csv")),
        ],
    ];
    for args in runs {
        let mut all = vec!["--quiet"];
        all.extend(args.iter().map(String::as_str));
        let o = run(&all, None);
        let (out, err) = text(&o);
        assert!(o.status.success(), "{args:?}: {err}");
        assert_eq!((out.as_str(), err.as_str()), ("", ""), "{args:?}");
    }
    // Errors still get through.
    let o = run(
        &["--quiet", "plan", "--spec", &s(&d.join("nope.toml"))],
        None,
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o).1.contains("nope.toml"));
}

#[test]
fn link_writes_summary_json_and_prints_it_with_json() {
    let dir = mini_copy();
    let o = link(dir.path(), "out", &["--json"], None);
    let printed = json_of(&o);
    let file: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(dir.path().join("out/summary.json")).unwrap(),
    )
    .unwrap();
    let id = file["run_id"].as_str().unwrap();
    assert_eq!(printed["run_id"].as_str(), Some(id));
    assert_eq!(id.len(), "20261203T230455Z-3f9a1c".len(), "{id}");
    // The decisions use the file vocabulary and add up to the candidate pairs.
    let d = &file["decisions"];
    let total: u64 = ["match", "review", "non_match"]
        .iter()
        .map(|k| d[k].as_u64().unwrap())
        .sum();
    assert_eq!(Some(total), file["blocking"]["candidate_pairs"].as_u64());
    let pairs = read_csv(&dir.path().join("out/pairs.csv"));
    assert_eq!(total as usize, pairs.len() - 1);
    assert_eq!(file["records"], 20);
    let outputs: Vec<&str> = file["outputs"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap())
        .collect();
    for f in ["crosswalk.csv", "pairs.csv", "review.csv", "summary.json"] {
        assert!(outputs.contains(&f), "{outputs:?}");
        assert!(dir.path().join("out").join(f).exists());
    }
    // A second run gets another id.
    let again = json_of(&link(dir.path(), "out", &["--json"], None));
    assert_ne!(again["run_id"].as_str(), Some(id));
}

#[test]
fn plan_train_merge_and_explain_print_json() {
    let dir = mini_copy();
    let d = dir.path();
    let spec = s(&d.join("spec.toml"));
    let plan = json_of(&run(&["plan", "--spec", &spec, "--json"], None));
    assert_eq!(plan["records"], 20);
    assert_eq!(plan["keys"].as_array().unwrap().len(), 2);
    let t = json_of(&train_run(d, "fit", &["--json"]));
    assert_eq!(t["command"], "train");
    assert!(t["attributes"][0]["levels"][0]["bits"].as_f64().is_some());
    let model = s(&d.join("fit/model.toml"));
    assert!(link(d, "run", &["--model", &model], None).status.success());
    let m = json_of(&run(
        &[
            "merge",
            "--spec",
            &spec,
            "--out",
            &s(&d.join("merged")),
            &s(&d.join("run")),
            "--json",
        ],
        None,
    ));
    assert_eq!(m["records"], 20);
    let run_model = d.join("run/model.toml");
    let e = json_of(&explain(d, &run_model, "crm:c1", "shop:s1", &["--json"]));
    // The crosswalk next to the model gives the customer keys; both are one customer.
    let ka = e["records"][0]["customer_key"].as_str().unwrap();
    assert!(ka.starts_with("SK-"), "{ka}");
    assert_eq!(e["records"][1]["customer_key"].as_str(), Some(ka));
    let sum: f64 = e["attributes"]
        .as_array()
        .unwrap()
        .iter()
        .map(|a| a["bits"].as_f64().unwrap())
        .sum();
    assert!((sum - e["evidence_bits"].as_f64().unwrap()).abs() < 1e-9);
    let dob = e["attributes"]
        .as_array()
        .unwrap()
        .iter()
        .find(|a| a["attribute"] == "birth_date")
        .unwrap();
    // Raw as written in each file, standardized alike.
    assert_eq!(dob["raw_a"], "03/14/1985");
    assert_eq!(dob["raw_b"], "14.03.1985");
    assert_eq!(dob["standardized_a"], dob["standardized_b"]);
    assert!(e["refused_by_guard"].is_null());
    assert_eq!(e["decision"], "match");
}

#[test]
fn explain_refuses_a_record_compared_with_itself() {
    let dir = mini_copy();
    let d = dir.path();
    let model = train(d, "fit");
    let o = explain(d, &model, "crm:c1", "crm:c1", &[]);
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o).1.contains("twice"), "{}", text(&o).1);
}

#[test]
fn explain_keeps_its_columns_with_long_values() {
    let dir = mini_copy();
    let d = dir.path();
    // A very long e-mail address on one record.
    let crm = std::fs::read_to_string(d.join("crm.csv")).unwrap();
    let long = format!("anna.{}@example.org", "x".repeat(120));
    std::fs::write(
        d.join("crm.csv"),
        crm.replace("anna.berglund@example.org", &long),
    )
    .unwrap();
    let model = train(d, "fit");
    let o = explain(d, &model, "crm:c1", "shop:s1", &[]);
    let (out, err) = text(&o);
    assert!(o.status.success(), "{err}");
    // Every attribute line starts with the attribute, then the level and the bits in
    // the same columns; long values are cut with `…` and come last.
    let header = out.lines().find(|l| l.starts_with("attribute")).unwrap();
    let bits_end = header.find("bits").unwrap() + 4;
    for line in out
        .lines()
        .skip_while(|l| !l.starts_with("attribute"))
        .skip(1)
    {
        if line.is_empty() {
            break;
        }
        assert!(line.chars().count() < 140, "{line}");
        let line_bits: String = line.chars().take(bits_end).collect();
        if !line_bits.trim().is_empty() {
            let last = line_bits.split_whitespace().last().unwrap();
            assert!(last.parse::<f64>().is_ok(), "bits column moved: {line}");
        }
    }
    assert!(out.contains('…'), "{out}");
    assert!(out.contains("customer key unknown"), "{out}");
    assert!(out.contains("no clustering guard refuses"), "{out}");
    assert!(out.contains("prior") && out.contains("λ"), "{out}");
}

#[test]
fn train_out_is_a_folder() {
    let dir = mini_copy();
    let d = dir.path();
    let o = train_run(d, "m.toml", &[]);
    assert_eq!(o.status.code(), Some(2));
    let err = text(&o).1;
    assert!(
        err.contains("folder") && err.contains("model.toml"),
        "{err}"
    );
    assert!(!d.join("m.toml").exists());
}

#[test]
fn demo_runs_without_the_repository() {
    // From an empty folder with no demo-data/ in sight: the built-in data is used.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("demo-out");
    let mut cmd = std::process::Command::new(bin());
    cmd.current_dir(dir.path())
        .args(["demo", "--out", out.to_str().unwrap()]);
    let o = cmd.output().unwrap();
    let (stdout, err) = text(&o);
    assert!(o.status.success(), "{err}");
    assert!(stdout.contains("built into samekey"), "{stdout}");
    assert!(stdout.contains("pairwise"), "{stdout}");
    assert!(out.join("crosswalk.csv").exists());
    // Nothing but the output folder was left behind.
    let left: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
    assert_eq!(left.len(), 1);
}
