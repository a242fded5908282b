//! Durability: a killed or refused run leaves the output folder holding one complete,
//! consistent run; two writers never mix; leftovers are cleaned up.
//!
//! Runs are killed at named points (the test-only `SAMEKEY_TEST_CRASH_AT` hook aborts
//! the process there, as `kill -9` would) and at random instants with SIGKILL.
//! `SAMEKEY_KILL_ROUNDS` sets the number of timed-kill and concurrency rounds in one test
//! run, `SAMEKEY_KILL_SEED` the seed of the kill times; `bench/kill_rounds.sh` runs each
//! test 20 times with a seed of its own and counts the passes.

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use crate::common::*;

/// Check that `out` holds exactly one complete run: the manifest of `current` lists
/// every file with its size, header and row count, each top-level link resolves to a
/// file of that run with the recorded size, header and rows, and no run folder is
/// partial. Returns the run id.
pub fn assert_consistent(out: &Path) -> String {
    let manifest = out.join("current/manifest.json");
    let text = std::fs::read_to_string(&manifest)
        .unwrap_or_else(|e| panic!("{}: {e}", manifest.display()));
    let m: serde_json::Value = serde_json::from_str(&text).unwrap();
    let run_id = m["run_id"].as_str().unwrap().to_string();
    let target = std::fs::read_link(out.join("current")).unwrap();
    assert!(target.ends_with(&run_id), "{target:?} vs {run_id}");
    let mut listed = vec!["manifest.json".to_string()];
    for f in m["files"].as_array().unwrap() {
        let name = f["name"].as_str().unwrap();
        listed.push(name.to_string());
        let path = out.join(name);
        let bytes = std::fs::read(&path).unwrap_or_else(|e| panic!("{name}: {e}"));
        assert_eq!(
            bytes.len() as u64,
            f["bytes"].as_u64().unwrap(),
            "{name} size"
        );
        if let Some(rows) = f["rows"].as_u64() {
            let mut r = csv::ReaderBuilder::new()
                .has_headers(true)
                .flexible(true)
                .from_reader(&bytes[..]);
            let header: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
            assert_eq!(
                header.join(","),
                f["header"].as_str().unwrap(),
                "{name} header"
            );
            assert_eq!(r.records().count() as u64, rows, "{name} rows");
        }
    }
    // Every top-level entry is a link into `current` (or the folder's own machinery).
    for e in std::fs::read_dir(out).unwrap().flatten() {
        let name = e.file_name().to_string_lossy().into_owned();
        if [".samekey", ".samekey.lock", "current"].contains(&name.as_str()) {
            continue;
        }
        let link = std::fs::read_link(e.path())
            .unwrap_or_else(|_| panic!("`{name}` is not a link into current/"));
        assert!(link.starts_with("current"), "{name} -> {link:?}");
        // A leftover link of a killed switch may dangle, but never shows another run.
        if e.path().exists() {
            assert!(listed.contains(&name), "`{name}` is not in the current run");
        }
    }
    run_id
}

/// Synthetic data of `customers` customers in a fresh folder (kept alive by the guard).
fn synth_data(customers: usize) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("data");
    let o = run(
        &[
            "--quiet",
            "synth",
            "--customers",
            &customers.to_string(),
            "--out",
            data.to_str().unwrap(),
        ],
        None,
    );
    assert!(o.status.success(), "{}", text(&o).1);
    dir
}

fn link_cmd(spec: &Path, out: &Path, extra: &[&str]) -> Command {
    let mut cmd = Command::new(bin());
    cmd.args(["--quiet", "link", "--spec"])
        .arg(spec)
        .arg("--out")
        .arg(out)
        .args(extra)
        .stdout(Stdio::null())
        .stderr(Stdio::piped());
    cmd
}

fn rounds() -> usize {
    std::env::var("SAMEKEY_KILL_ROUNDS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(3)
}

/// Seed of the kill times: `SAMEKEY_KILL_SEED` (each round of `bench/kill_rounds.sh`
/// gives its own), else a fixed one.
fn kill_seed() -> u64 {
    let extra: u64 = std::env::var("SAMEKEY_KILL_SEED")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(0);
    // Never zero: the xorshift generator would stay at zero.
    (0x9e37_79b9_7f4a_7c15u64 ^ extra.wrapping_mul(0x2545_f491_4f6c_dd1d)) | 1
}

/// A small deterministic generator for kill times (no extra crate).
fn next(state: &mut u64) -> u64 {
    *state ^= *state << 13;
    *state ^= *state >> 7;
    *state ^= *state << 17;
    *state
}

#[test]
fn a_run_killed_at_each_point_leaves_the_previous_run() {
    let dir = mini_copy();
    let spec = dir.path().join("spec.toml");
    let out = dir.path().join("out");
    let o = link_cmd(&spec, &out, &[]).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let first = assert_consistent(&out);
    for point in [
        "after-read",
        "after-score",
        "before-commit",
        "before-rename",
        "before-switch",
    ] {
        let o = link_cmd(&spec, &out, &[])
            .env("SAMEKEY_TEST_CRASH_AT", point)
            .output()
            .unwrap();
        assert!(!o.status.success(), "{point}: the hook did not fire");
        assert_eq!(
            assert_consistent(&out),
            first,
            "{point}: switched too early"
        );
    }
    // Killed after the switch: the new run is complete.
    for point in ["after-switch", "between-links"] {
        let o = link_cmd(&spec, &out, &[])
            .env("SAMEKEY_TEST_CRASH_AT", point)
            .output()
            .unwrap();
        assert!(!o.status.success(), "{point}: the hook did not fire");
        assert_ne!(assert_consistent(&out), first, "{point}: not switched");
    }
    // The next run cleans up what the killed runs left.
    let o = link_cmd(&spec, &out, &[]).output().unwrap();
    assert!(o.status.success());
    assert_consistent(&out);
    let runs: Vec<_> = std::fs::read_dir(out.join(".samekey/runs"))
        .unwrap()
        .collect();
    assert_eq!(runs.len(), 1, "leftovers of killed runs: {runs:?}");
}

#[test]
fn runs_killed_at_random_instants_never_leave_a_mixed_folder() {
    let data = synth_data(500);
    let spec = data.path().join("data/spec.toml");
    let out = data.path().join("out");
    let started = Instant::now();
    let o = link_cmd(&spec, &out, &[]).output().unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let full = started.elapsed().as_millis().max(20) as u64;
    assert_consistent(&out);
    let mut seed = kill_seed();
    let mut killed = 0;
    for round in 0..rounds() * 2 {
        let wait = next(&mut seed) % (full + full / 4);
        let mut child = link_cmd(&spec, &out, &[]).spawn().unwrap();
        std::thread::sleep(Duration::from_millis(wait));
        if child.try_wait().unwrap().is_none() {
            killed += 1;
        }
        let _ = child.kill();
        let _ = child.wait();
        assert_consistent(&out);
        let _ = round;
    }
    assert!(killed > 0, "no run was killed while running");
    println!(
        "kill rounds: {killed} of {} runs killed while running",
        rounds() * 2
    );
    let o = link_cmd(&spec, &out, &[]).output().unwrap();
    assert!(o.status.success());
    assert_consistent(&out);
    assert_eq!(
        std::fs::read_dir(out.join(".samekey/runs"))
            .unwrap()
            .count(),
        1
    );
}

#[test]
fn a_second_writer_is_refused_and_the_folder_holds_one_run() {
    let data = synth_data(400);
    let spec = data.path().join("data/spec.toml");
    let out = data.path().join("out");
    let mut refused = 0;
    for _ in 0..rounds() {
        let a = link_cmd(&spec, &out, &[]).spawn().unwrap();
        let b = link_cmd(&spec, &out, &["--pairs", "linked"])
            .spawn()
            .unwrap();
        let (a, b) = (a.wait_with_output().unwrap(), b.wait_with_output().unwrap());
        let mut ok = 0;
        for o in [&a, &b] {
            let err = String::from_utf8_lossy(&o.stderr);
            match o.status.code() {
                Some(0) => ok += 1,
                Some(2) => assert!(err.contains("is in use by another samekey run"), "{err}"),
                other => panic!("exit {other:?}: {err}"),
            }
        }
        assert!(ok >= 1);
        assert_consistent(&out);
        refused += 2 - ok;
    }
    println!(
        "kill rounds: {refused} of {} second writers refused",
        rounds()
    );
}

#[test]
fn a_killed_synth_leaves_the_previous_data() {
    let data = synth_data(200);
    let dir = data.path().join("data");
    let before = std::fs::read(dir.join("crm_contacts.csv")).unwrap();
    let o = Command::new(bin())
        .args([
            "--quiet",
            "synth",
            "--customers",
            "300",
            "--seed",
            "9",
            "--out",
        ])
        .arg(&dir)
        .env("SAMEKEY_TEST_CRASH_AT", "synth-written")
        .output()
        .unwrap();
    assert!(!o.status.success());
    assert_eq!(std::fs::read(dir.join("crm_contacts.csv")).unwrap(), before);
    assert_consistent(&dir);
    // The data still link.
    let o = link_cmd(&dir.join("spec.toml"), &data.path().join("out"), &[])
        .output()
        .unwrap();
    assert!(o.status.success());
}

#[test]
fn a_bad_truth_file_is_found_before_the_outputs_are_replaced() {
    let dir = mini_copy();
    let o = link(dir.path(), "out", &[], None);
    assert!(o.status.success());
    let first = assert_consistent(&dir.path().join("out"));
    std::fs::write(dir.path().join("truth.csv"), "source,id\n").unwrap();
    let truth = dir.path().join("truth.csv");
    let o = link(
        dir.path(),
        "out",
        &["--truth", truth.to_str().unwrap()],
        None,
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o).1);
    assert_eq!(assert_consistent(&dir.path().join("out")), first);
    let missing = dir.path().join("missing.csv");
    let o = link(
        dir.path(),
        "out",
        &["--truth", missing.to_str().unwrap()],
        None,
    );
    assert_eq!(o.status.code(), Some(2), "{}", text(&o).1);
    assert_eq!(assert_consistent(&dir.path().join("out")), first);
}

#[test]
fn a_shard_run_into_a_full_run_folder_replaces_the_whole_set() {
    let dir = mini_copy();
    let model = train(dir.path(), "model");
    let o = link(dir.path(), "out", &[], None);
    assert!(o.status.success());
    assert!(dir.path().join("out/crosswalk.csv").exists());
    let o = link(
        dir.path(),
        "out",
        &["--model", model.to_str().unwrap(), "--shard", "1/2"],
        None,
    );
    assert!(o.status.success(), "{}", text(&o).1);
    assert_consistent(&dir.path().join("out"));
    for gone in ["crosswalk.csv", "refused.csv"] {
        assert!(
            std::fs::symlink_metadata(dir.path().join("out").join(gone)).is_err(),
            "{gone} of the full run beside the shard's pairs.csv"
        );
    }
}

#[test]
fn merge_refuses_missing_duplicated_and_mixed_shards() {
    let dir = mini_copy();
    let model = train(dir.path(), "model");
    let m = model.to_str().unwrap();
    for (out, extra) in [
        ("s1", vec!["--shard", "1/2"]),
        ("s2", vec!["--shard", "2/2"]),
        ("t1", vec!["--shard", "1/3"]),
        ("full", vec![]),
    ] {
        let mut args = vec!["--model", m];
        args.extend(extra);
        let o = link(dir.path(), out, &args, None);
        assert!(o.status.success(), "{}", text(&o).1);
    }
    let spec = dir.path().join("spec.toml");
    let merge = |shards: &[&str]| {
        let out = dir.path().join("merged");
        let mut args = vec![
            "merge",
            "--spec",
            spec.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
        ];
        let paths: Vec<String> = shards
            .iter()
            .map(|s| dir.path().join(s).to_str().unwrap().to_string())
            .collect();
        args.extend(paths.iter().map(String::as_str));
        let o = run(&args, None);
        (o.status.code(), text(&o).1)
    };
    let (code, err) = merge(&["s1"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("missing: 2/2"), "{err}");
    let (code, err) = merge(&["s1", "s1"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("given twice"), "{err}");
    let (code, err) = merge(&["s1", "t1"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("shard count"), "{err}");
    let (code, err) = merge(&["s1", "full"]);
    assert_eq!(code, Some(2));
    assert!(err.contains("holds no shard run"), "{err}");
    let (code, err) = merge(&["s1", "s2"]);
    assert_eq!(code, Some(0), "{err}");
    assert_consistent(&dir.path().join("merged"));
}

#[test]
fn merge_refuses_shards_with_their_own_thresholds() {
    let dir = mini_copy();
    let spec = dir.path().join("spec.toml");
    let s = std::fs::read_to_string(&spec).unwrap();
    std::fs::write(&spec, s.replace("review_at = 0.5", "review_at = 0.0000001")).unwrap();
    let model = train(dir.path(), "model");
    let m = model.to_str().unwrap();
    for (out, extra) in [
        ("s1", vec!["--shard", "1/2", "--target-precision", "0.6"]),
        ("s2", vec!["--shard", "2/2"]),
    ] {
        let mut args = vec!["--model", m];
        args.extend(extra);
        let o = link(dir.path(), out, &args, None);
        assert!(o.status.success(), "{}", text(&o).1);
    }
    let out = dir.path().join("merged");
    let o = run(
        &[
            "merge",
            "--spec",
            spec.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            dir.path().join("s1").to_str().unwrap(),
            dir.path().join("s2").to_str().unwrap(),
        ],
        None,
    );
    let err = text(&o).1;
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("threshold"), "{err}");
}
