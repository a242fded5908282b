//! `samekey evaluate` end to end: files in, report and exit code out.

use std::path::Path;
use std::process::{Command, Output};

fn samekey(dir: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_samekey"))
        .current_dir(dir)
        .args(args)
        .output()
        .expect("run samekey")
}

/// `samekey evaluate --truth TRUTH --crosswalk CROSSWALK` in `dir`, with extra flags.
fn evaluate(dir: &Path, truth: &str, crosswalk: &str, extra: &[&str]) -> Output {
    let mut args = vec!["evaluate", "--truth", truth, "--crosswalk", crosswalk];
    args.extend_from_slice(extra);
    samekey(dir, &args)
}

fn write_inputs(dir: &Path) {
    // Truth {crm1, crm2, web1}, {web2, shop3}, {shop4};
    // crosswalk {crm1, crm2}, {web1}, {web2, shop3}; shop4 missing, shop9 extra.
    std::fs::write(
        dir.join("truth.csv"),
        "source,source_id,entity_id\ncrm,1,A\ncrm,2,A\nweb,1,A\nweb,2,B\nshop,3,B\nshop,4,C\n",
    )
    .unwrap();
    std::fs::write(
        dir.join("crosswalk.csv"),
        "source,source_id,customer_key\ncrm,1,K1\ncrm,2,K1\nweb,1,K2\nweb,2,K3\nshop,3,K3\nshop,9,K4\n",
    )
    .unwrap();
    std::fs::write(
        dir.join("pairs.csv"),
        "source_a,id_a,source_b,id_b,evidence_bits\ncrm,1,crm,2,10\ncrm,1,web,1,3\nweb,2,shop,3,8\nweb,2,shop,4,-2\n",
    )
    .unwrap();
}

#[test]
fn evaluate_prints_json_scores() {
    let dir = tempfile::tempdir().unwrap();
    write_inputs(dir.path());
    let out = evaluate(
        dir.path(),
        "truth.csv",
        "crosswalk.csv",
        &["--pairs", "pairs.csv", "--json"],
    );
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let j: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    // True pairs 3 + 1 = 4; predicted crm1-crm2 and web2-shop3, both true.
    assert_eq!(j["pairwise"]["precision"], 1.0);
    assert_eq!(j["pairwise"]["recall"], 0.5);
    // scikit-learn 1.9.1 adjusted_rand_score([0,0,0,1,1,2], [0,0,1,2,2,3]).
    let ari = j["adjusted_rand_index"].as_f64().unwrap();
    assert!((ari - 0.5945945945945946).abs() < 1e-12, "{ari}");
    // Candidates: crm1-crm2, crm1-web1, web2-shop3 true; web2-shop4 not: 3 of 4.
    assert_eq!(j["blocking"]["pair_completeness"], 0.75);
    let rr = j["blocking"]["reduction_ratio"].as_f64().unwrap();
    assert!((rr - (1.0 - 4.0 / 15.0)).abs() < 1e-12);
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("e.g. `shop/4`") && err.contains("e.g. `shop/9`"),
        "{err}"
    );
}

#[test]
fn evaluate_prints_a_table() {
    let dir = tempfile::tempdir().unwrap();
    write_inputs(dir.path());
    let out = evaluate(dir.path(), "truth.csv", "crosswalk.csv", &[]);
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("pairwise                1.000000  0.500000  0.666667"),
        "{text}"
    );
    assert!(!text.contains("pair completeness"), "{text}");
}

#[test]
fn evaluate_bad_input_exits_2_and_names_the_file() {
    let dir = tempfile::tempdir().unwrap();
    write_inputs(dir.path());
    // Pairs file given as the crosswalk: wrong header.
    let out = evaluate(dir.path(), "truth.csv", "pairs.csv", &[]);
    assert_eq!(out.status.code(), Some(2), "{out:?}");
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("`pairs.csv`: missing column `source`"),
        "{err}"
    );
    assert!(err.contains("found `source_a`, `id_a`"), "{err}");
    // Missing file.
    let out = evaluate(dir.path(), "nope.csv", "crosswalk.csv", &[]);
    assert_eq!(out.status.code(), Some(2), "{out:?}");
    // Missing required flag.
    let out = samekey(dir.path(), &["evaluate", "--truth", "truth.csv"]);
    assert_eq!(out.status.code(), Some(2), "{out:?}");
}
