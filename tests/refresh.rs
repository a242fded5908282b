//! `samekey refresh` and `samekey export`: key inheritance over a scripted scenario,
//! dry runs, the write lock, and kill -9 at several points. Each test runs on SQLite;
//! the `_postgres` variants run on PostgreSQL when `SAMEKEY_TEST_PG_URL` is set
//! (`.ci/run` starts a server) and skip with a message otherwise.

use std::collections::BTreeMap;
use std::path::Path;
use std::process::{Command, Stdio};

use crate::common::{mini, read_csv, run, text};

/// The mini data plus one shop record of a customer who is also in the CRM (c6) but
/// shares no blocking value with it yet, so run 1 gives them two keys.
fn scenario_dir() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    for f in ["crm.csv", "spec.toml"] {
        std::fs::copy(mini().join(f), dir.path().join(f)).unwrap();
    }
    let mut shop = std::fs::read_to_string(mini().join("shop.csv")).unwrap();
    shop.push_str("s12,\"Okafor, Idris\",Chicago,60601,i.okafor.work@example.com,,24.12.1988\n");
    std::fs::write(dir.path().join("shop.csv"), shop).unwrap();
    dir
}

/// Replace the row with id `id` (first field) by `row`, or drop it (`None`).
fn edit(path: &Path, id: &str, row: Option<&str>) {
    let text = std::fs::read_to_string(path).unwrap();
    let mut found = false;
    let lines: Vec<&str> = text
        .lines()
        .filter_map(|l| {
            if l.split(',').next() == Some(id) {
                found = true;
                row
            } else {
                Some(l)
            }
        })
        .collect();
    assert!(found, "no row {id} in {}", path.display());
    std::fs::write(path, lines.join("\n") + "\n").unwrap();
}

fn append(path: &Path, row: &str) {
    let mut text = std::fs::read_to_string(path).unwrap();
    text.push_str(row);
    text.push('\n');
    std::fs::write(path, text).unwrap();
}

/// The second batch: new records, changed e-mail and address, a deleted record, a
/// merge (s12 now shares e-mail and postcode with c6) and a split (s5 turns out to be
/// another member of the household).
fn second_batch(dir: &Path) {
    let (crm, shop) = (dir.join("crm.csv"), dir.join("shop.csv"));
    edit(
        &crm,
        "c3",
        Some("c3,Lotte,Vandermeer,Riverton,82501,lotte.vandermeer@example.net,307-555-0103,11/30/1990"),
    );
    edit(
        &crm,
        "c9",
        Some("c9,Sana,Rahimi,Oakridge,97463,sana.rahimi@example.net,503-555-0109,08/08/1983"),
    );
    append(
        &crm,
        "c11,Nadia,Ferreira,Eastport,04631,nadia.f@example.org,207-555-0120,04/22/1991",
    );
    edit(&shop, "s8", None);
    edit(
        &shop,
        "s5",
        Some("s5,\"Halvorsen, Birgit\",Lakeside,54140,,9205550105,03.03.2001"),
    );
    edit(
        &shop,
        "s12",
        Some("s12,\"Okafor, Idris\",Lakeside,54140,idris.okafor@example.net,,24.12.1988"),
    );
    append(
        &shop,
        "s11,\"Lindqvist, Oskar\",Fairview,97024,oskar.l@example.com,5035550130,19.09.1966",
    );
}

fn refresh(dir: &Path, store: &str, extra: &[&str]) -> (String, String) {
    let spec = dir.join("spec.toml");
    let mut args = vec![
        "refresh",
        "--spec",
        spec.to_str().unwrap(),
        "--store",
        store,
    ];
    args.extend_from_slice(extra);
    let o = run(&args, None);
    let (out, err) = text(&o);
    assert!(o.status.success(), "refresh failed\n{out}\n{err}");
    (out, err)
}

/// A crosswalk: (source, source id) -> customer key.
type Crosswalk = BTreeMap<(String, String), String>;

/// Export the store; returns (crosswalk record -> key, key event rows).
fn export(dir: &Path, store: &str, since: i64) -> (Crosswalk, Vec<Vec<String>>) {
    let out = dir.join(format!("export-{since}"));
    let since = since.to_string();
    let o = run(
        &[
            "export",
            "--store",
            store,
            "--out",
            out.to_str().unwrap(),
            "--events-since",
            &since,
        ],
        None,
    );
    assert!(o.status.success(), "{:?}", text(&o));
    let cw = read_csv(&out.join("crosswalk.csv"));
    assert_eq!(cw[0], ["source", "source_id", "customer_key"]);
    let ev = read_csv(&out.join("key_events.csv"));
    assert_eq!(
        ev[0],
        ["run", "customer_key", "event", "other_key", "records"]
    );
    (
        cw[1..]
            .iter()
            .map(|r| ((r[0].clone(), r[1].clone()), r[2].clone()))
            .collect(),
        ev[1..].to_vec(),
    )
}

fn key(cw: &Crosswalk, source: &str, id: &str) -> String {
    cw[&(source.to_string(), id.to_string())].clone()
}

/// The scripted scenario: exactly the expected key events, stable keys elsewhere, and
/// a repeated refresh that changes nothing.
fn scenario(store: &str) {
    let dir = scenario_dir();
    let d = dir.path();
    let (out, _) = refresh(d, store, &[]);
    assert!(out.contains("run 1 (first run)"), "{out}");
    let (cw1, ev1) = export(d, store, 0);
    assert_eq!(cw1.len(), 21);
    assert_eq!(ev1.len(), 12, "one created event per customer: {ev1:?}");
    assert!(ev1.iter().all(|e| e[0] == "1" && e[2] == "created"));
    // Run 1 found the mini data's pairs; c6 and s12 are apart.
    assert_eq!(key(&cw1, "crm", "c5"), key(&cw1, "shop", "s5"));
    assert_ne!(key(&cw1, "crm", "c6"), key(&cw1, "shop", "s12"));

    second_batch(d);
    let (out, _) = refresh(d, store, &[]);
    assert!(
        out.contains("key events: created 2, merged_into 1, split_from 1, retired 1"),
        "{out}"
    );
    let (cw2, ev2) = export(d, store, 1);
    // Merge: the older key survives; both were created in run 1, so the smaller text.
    let (k6, k12) = (key(&cw1, "crm", "c6"), key(&cw1, "shop", "s12"));
    let (survivor, merged) = if k6 < k12 { (k6, k12) } else { (k12, k6) };
    let greta = key(&cw1, "crm", "c5");
    let mut expected = vec![
        vec![
            "2".to_string(),
            key(&cw2, "crm", "c11"),
            "created".into(),
            String::new(),
            "1".into(),
        ],
        vec![
            "2".into(),
            key(&cw2, "shop", "s11"),
            "created".into(),
            String::new(),
            "1".into(),
        ],
        vec![
            "2".into(),
            merged.clone(),
            "merged_into".into(),
            survivor.clone(),
            "0".into(),
        ],
        vec![
            "2".into(),
            key(&cw2, "shop", "s5"),
            "split_from".into(),
            greta.clone(),
            "1".into(),
        ],
        vec![
            "2".into(),
            key(&cw1, "shop", "s8"),
            "retired".into(),
            String::new(),
            "0".into(),
        ],
    ];
    let mut got = ev2.clone();
    expected.sort();
    got.sort();
    assert_eq!(got, expected);
    assert_eq!(key(&cw2, "crm", "c6"), survivor);
    assert_eq!(key(&cw2, "shop", "s12"), survivor);
    // The split keeps the key on the CRM record (ties go to the first anchor).
    assert_eq!(key(&cw2, "crm", "c5"), greta);
    assert_ne!(key(&cw2, "shop", "s5"), greta);
    // Changed e-mail and address: same customer, same key.
    for (s, id) in [("crm", "c3"), ("shop", "s3"), ("crm", "c9"), ("shop", "s7")] {
        assert_eq!(key(&cw2, s, id), key(&cw1, s, id), "{s}/{id}");
    }
    // The deleted record left the current crosswalk.
    assert!(!cw2.contains_key(&("shop".to_string(), "s8".to_string())));
    assert_eq!(cw2.len(), 22);
    // New keys were never issued before.
    let old: std::collections::BTreeSet<&String> = cw1.values().collect();
    assert!(!old.contains(&key(&cw2, "crm", "c11")));
    assert!(!old.contains(&key(&cw2, "shop", "s5")));
    assert!(
        out.contains("crm                      11        1        2        0"),
        "{out}"
    );
    assert!(
        out.contains("shop                     11        1        2        1"),
        "{out}"
    );

    // The same refresh again changes nothing.
    let (out, _) = refresh(d, store, &[]);
    assert!(
        out.contains("key events: created 0, merged_into 0, split_from 0, retired 0"),
        "{out}"
    );
    let (cw3, ev3) = export(d, store, 2);
    assert_eq!(cw3, cw2);
    assert!(ev3.is_empty(), "{ev3:?}");
}

fn sqlite_store(dir: &tempfile::TempDir) -> String {
    dir.path().join("store.db").display().to_string()
}

#[test]
fn scenario_yields_exactly_the_expected_key_events() {
    let s = tempfile::tempdir().unwrap();
    scenario(&sqlite_store(&s));
}

#[test]
fn scenario_yields_exactly_the_expected_key_events_postgres() {
    if let Some(url) = pg_database("scenario") {
        scenario(&url);
    }
}

/// A fresh PostgreSQL database, or `None` with a message when no server is configured.
fn pg_database(name: &str) -> Option<String> {
    let Ok(url) = std::env::var("SAMEKEY_TEST_PG_URL") else {
        eprintln!(
            "skipped: PostgreSQL test `{name}` needs SAMEKEY_TEST_PG_URL (see .ci/postgres.sh)"
        );
        return None;
    };
    let db = format!("samekey_it_{name}");
    let mut c = postgres::Client::connect(&url, postgres::NoTls).expect("SAMEKEY_TEST_PG_URL");
    c.batch_execute(&format!("DROP DATABASE IF EXISTS {db} WITH (FORCE)"))
        .unwrap();
    c.batch_execute(&format!("CREATE DATABASE {db}")).unwrap();
    let (base, _) = url.rsplit_once('/').unwrap();
    Some(format!("{base}/{db}"))
}

#[test]
fn default_store_sits_next_to_the_spec_and_dry_run_commits_nothing() {
    let dir = scenario_dir();
    let d = dir.path();
    let spec = d.join("spec.toml");
    let o = run(
        &["refresh", "--spec", spec.to_str().unwrap(), "--dry-run"],
        None,
    );
    let (out, err) = text(&o);
    assert!(o.status.success(), "{out}{err}");
    assert!(out.contains("dry run: nothing was committed"), "{out}");
    assert!(out.contains("created 12"), "{out}");
    let store = d.join("samekey-store.db");
    assert!(
        store.is_file(),
        "the default store is created next to the spec"
    );
    let o = run(
        &[
            "export",
            "--store",
            store.to_str().unwrap(),
            "--out",
            d.join("x").to_str().unwrap(),
        ],
        None,
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o).1.contains("holds no run yet"), "{:?}", text(&o));
    let o = run(&["refresh", "--spec", spec.to_str().unwrap()], None);
    assert!(o.status.success());
    second_batch(d);
    let o = run(
        &["refresh", "--spec", spec.to_str().unwrap(), "--dry-run"],
        None,
    );
    let (out, _) = text(&o);
    assert!(out.contains("merged_into 1, split_from 1"), "{out}");
    let (_, ev) = export(d, store.to_str().unwrap(), 1);
    assert!(ev.is_empty(), "a dry run commits no events: {ev:?}");
}

/// Start a refresh that stops at `point` (test hook) and wait until it is there.
/// Returns the child and its stderr, which must stay open while the child runs (a
/// closed pipe would end it with SIGPIPE at its next message).
fn paused_refresh(
    dir: &Path,
    store: &str,
    point: &str,
) -> (std::process::Child, std::process::ChildStderr) {
    let spec = dir.join("spec.toml");
    let mut child = Command::new(crate::common::bin())
        .args([
            "refresh",
            "--spec",
            spec.to_str().unwrap(),
            "--store",
            store,
        ])
        .env("SAMEKEY_TEST_PAUSE", point)
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut err = child.stderr.take().unwrap();
    let mut seen = String::new();
    let mut buf = [0u8; 256];
    while !seen.contains(&format!("paused at {point}\n")) {
        use std::io::Read;
        let n = err.read(&mut buf).unwrap();
        assert!(n > 0, "refresh ended before {point}: {seen}");
        seen.push_str(&String::from_utf8_lossy(&buf[..n]));
    }
    (child, err)
}

/// While one refresh holds the store, a second is refused at once with a clear message;
/// when the first is killed, the lock is gone with it.
fn second_refresh_refused(store: &str) {
    let dir = scenario_dir();
    let d = dir.path();
    refresh(d, store, &[]);
    let (mut first, _first_err) = paused_refresh(d, store, "linked");
    let spec = d.join("spec.toml");
    let o = run(
        &[
            "refresh",
            "--spec",
            spec.to_str().unwrap(),
            "--store",
            store,
        ],
        None,
    );
    let (out, err) = text(&o);
    assert_eq!(
        o.status.code(),
        Some(2),
        "status {:?}\nstdout:\n{out}\nstderr:\n{err}",
        o.status
    );
    assert!(
        err.contains("is busy: another refresh is writing to it"),
        "{err}"
    );
    first.kill().unwrap();
    first.wait().unwrap();
    refresh(d, store, &[]);
}

#[test]
fn second_refresh_is_refused_while_one_runs() {
    let s = tempfile::tempdir().unwrap();
    second_refresh_refused(&sqlite_store(&s));
}

#[test]
fn second_refresh_is_refused_while_one_runs_postgres() {
    if let Some(url) = pg_database("lock") {
        second_refresh_refused(&url);
    }
}

/// kill -9 at several points of a refresh: the store still holds the previous run,
/// complete, and the next refresh works.
fn kill_leaves_previous_run(store: &str) {
    let dir = scenario_dir();
    let d = dir.path();
    refresh(d, store, &[]);
    let (cw1, ev1) = export(d, store, 0);
    second_batch(d);
    for point in ["locked", "linked", "written"] {
        let (mut child, _err) = paused_refresh(d, store, point);
        child.kill().unwrap(); // SIGKILL
        child.wait().unwrap();
        let (cw, ev) = export(d, store, 0);
        assert_eq!(cw, cw1, "crosswalk changed after a kill at {point}");
        assert_eq!(ev, ev1, "key events changed after a kill at {point}");
    }
    // Kills at arbitrary moments: the store holds run 1 or a complete run 2.
    let spec = d.join("spec.toml");
    let mut run2: Option<Crosswalk> = None;
    for delay_ms in [5u64, 40, 120, 300] {
        let mut child = Command::new(crate::common::bin())
            .args([
                "refresh",
                "--spec",
                spec.to_str().unwrap(),
                "--store",
                store,
            ])
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        std::thread::sleep(std::time::Duration::from_millis(delay_ms));
        let _ = child.kill();
        let finished = child.wait().unwrap().success();
        let (cw, ev) = export(d, store, 0);
        if cw == cw1 {
            assert_eq!(ev, ev1, "kill after {delay_ms} ms");
        } else {
            // A complete run 2: five more events and the second batch's records.
            assert_eq!(ev.len(), ev1.len() + 5, "kill after {delay_ms} ms");
            assert_eq!(cw.len(), 22);
            run2 = Some(cw);
            break;
        }
        assert!(!finished || delay_ms == 300);
    }
    refresh(d, store, &[]);
    let (cw, _) = export(d, store, 0);
    if let Some(r2) = run2 {
        assert_eq!(cw, r2);
    }
    assert_eq!(cw.len(), 22);
}

#[test]
fn kill_at_any_point_leaves_the_previous_run_complete() {
    let s = tempfile::tempdir().unwrap();
    kill_leaves_previous_run(&sqlite_store(&s));
}

#[test]
fn kill_at_any_point_leaves_the_previous_run_complete_postgres() {
    if let Some(url) = pg_database("kill") {
        kill_leaves_previous_run(&url);
    }
}

/// Edit every source file of a synthetic data set in `dir` (about 4% of the rows, by
/// row number and `round`): change e-mail addresses, delete rows, make a row a copy of
/// the row before it under its own id (it moves to that customer), and add copies of
/// rows under new ids.
fn edit_batch(dir: &Path, round: usize) {
    for f in [
        "crm_contacts.csv",
        "webshop_accounts.csv",
        "support_tickets.csv",
    ] {
        let path = dir.join(f);
        let mut rows = read_csv(&path);
        let header = rows.remove(0);
        let email = header.iter().position(|h| h.contains("email"));
        let (mut out, mut added) = (Vec::new(), Vec::new());
        for i in 0..rows.len() {
            let j = i + round * 13;
            let mut row = rows[i].clone();
            if j % 101 == 5 {
                continue;
            }
            if j % 97 == 3 {
                if let Some(e) = email {
                    row[e] = format!("changed.{round}.{i}@example.org");
                }
            }
            if j % 89 == 8 && i > 0 {
                let id = row[0].clone();
                row = rows[i - 1].clone();
                row[0] = id;
            }
            if j % 211 == 11 {
                let mut copy = row.clone();
                copy[0] = format!("{}N{round}", copy[0]);
                added.push(copy);
            }
            out.push(row);
        }
        out.extend(added);
        let mut w = csv::Writer::from_path(&path).unwrap();
        w.write_record(&header).unwrap();
        for r in &out {
            w.write_record(r).unwrap();
        }
        w.flush().unwrap();
    }
}

/// The stored edges, sorted, without the run that scored them.
fn stored_edges(store: &str) -> Vec<String> {
    let sql = "SELECT source_a, id_a, source_b, id_b, weight, probability, decision FROM edges \
               ORDER BY source_a, id_a, source_b, id_b";
    let mut rows: Vec<String> = if store.starts_with("postgres") {
        let mut c = postgres::Client::connect(store, postgres::NoTls).unwrap();
        c.query(sql, &[])
            .unwrap()
            .iter()
            .map(|r| {
                let (w, p): (f64, f64) = (r.get(4), r.get(5));
                let t = |i: usize| r.get::<_, String>(i);
                format!("{} {} {} {} {w} {p} {}", t(0), t(1), t(2), t(3), t(6))
            })
            .collect()
    } else {
        let c = rusqlite::Connection::open(store).unwrap();
        let mut st = c.prepare(sql).unwrap();
        st.query_map([], |r| {
            let t = |i: usize| r.get::<_, String>(i);
            let (w, p): (f64, f64) = (r.get(4)?, r.get(5)?);
            Ok(format!(
                "{} {} {} {} {w} {p} {}",
                t(0)?,
                t(1)?,
                t(2)?,
                t(3)?,
                t(6)?
            ))
        })
        .unwrap()
        .map(Result::unwrap)
        .collect()
    };
    rows.sort();
    rows
}

/// Two rounds of edits; after each, store `inc` refreshes incrementally and store `full`
/// (same history) re-links in full with the same model: the same crosswalk, the same
/// key events and the same stored edges. `inc` keeps refreshing incrementally, so the
/// second round also checks the edges it maintained.
fn incremental_equals_full(inc: &str, full: &str) {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let o = run(
        &[
            "synth",
            "--customers",
            "1000",
            "--seed",
            "11",
            "--quiet",
            "--out",
            d.to_str().unwrap(),
        ],
        None,
    );
    assert!(o.status.success(), "{:?}", text(&o));
    for store in [inc, full] {
        let (out, _) = refresh(d, store, &[]);
        assert!(out.contains("linking: full"), "{out}");
    }
    for round in 1..=2 {
        edit_batch(d, round);
        let (out, _) = refresh(d, inc, &[]);
        assert!(out.contains("linking: incremental"), "{out}");
        let reused: usize = out
            .split(" stored pair(s) reused")
            .next()
            .and_then(|s| s.rsplit(' ').next())
            .and_then(|n| n.parse().ok())
            .unwrap_or_else(|| panic!("{out}"));
        assert!(reused > 500, "{out}");
        let (out_full, _) = refresh(d, full, &["--full"]);
        assert!(out_full.contains("linking: full, every candidate pair compared (--full)"));
        let events = |o: &str| -> String {
            o.lines()
                .skip_while(|l| !l.contains("key events:"))
                .collect::<Vec<_>>()
                .join("\n")
        };
        assert_eq!(events(&out), events(&out_full), "{out}\n{out_full}");
        let (cw_inc, ev_inc) = export(d, inc, round as i64);
        let (cw_full, ev_full) = export(d, full, round as i64);
        assert_eq!(cw_inc, cw_full, "round {round}");
        assert_eq!(ev_inc, ev_full, "round {round}");
        assert!(
            !ev_inc.is_empty(),
            "round {round}: the edits change some customers"
        );
        assert_eq!(stored_edges(inc), stored_edges(full), "round {round}");
    }
}

#[test]
fn incremental_refresh_equals_a_full_relink() {
    let s = tempfile::tempdir().unwrap();
    let store = |n: &str| s.path().join(n).display().to_string();
    incremental_equals_full(&store("inc.db"), &store("full.db"));
}

#[test]
fn incremental_refresh_equals_a_full_relink_postgres() {
    if let (Some(inc), Some(full)) = (pg_database("incremental"), pg_database("full")) {
        incremental_equals_full(&inc, &full);
    }
}

/// A store written before incremental refreshes (schema version 2) is migrated, and
/// its next refresh links in full: its edges carry no link fingerprint.
#[test]
fn a_version_2_store_refreshes_in_full_once() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    for f in ["crm.csv", "shop.csv", "spec.toml"] {
        std::fs::copy(mini().join(f), d.join(f)).unwrap();
    }
    let store = d.join("v2.sqlite");
    std::fs::copy(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/store/v2.sqlite"),
        &store,
    )
    .unwrap();
    let store = store.display().to_string();
    let (out, _) = refresh(d, &store, &[]);
    assert!(out.contains("run 3 (previous run 2)"), "{out}");
    assert!(
        out.contains("linking: full, every candidate pair compared (the last run was written by an older samekey)"),
        "{out}"
    );
    // The fixture's run 2 had one changed e-mail address; the mini data has the old one.
    assert!(
        out.contains("key events: created 0, merged_into 0, split_from 0, retired 0"),
        "{out}"
    );
    edit(
        &d.join("crm.csv"),
        "c2",
        Some("c2,Marcus,Oyelaran,Springfield,62702,marcus.o@example.net,217-555-0102,07/02/1979"),
    );
    let (out, _) = refresh(d, &store, &[]);
    assert!(
        out.contains("linking: incremental, 1 new or changed and 0 deleted record(s)"),
        "{out}"
    );
}

/// `--json`: the refresh and export summaries as JSON, with the numbers of the text.
#[test]
fn json_summaries() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    for f in ["crm.csv", "shop.csv", "spec.toml"] {
        std::fs::copy(mini().join(f), d.join(f)).unwrap();
    }
    let store = d.join("s.db").display().to_string();
    let (out, _) = refresh(d, &store, &["--json"]);
    let j: serde_json::Value = serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {out}"));
    assert_eq!(j["run"], 1);
    assert_eq!(j["previous_run"], serde_json::Value::Null);
    assert_eq!(j["committed"], true);
    assert_eq!(j["records"], 20);
    assert_eq!(j["sources"][0]["source"], "crm");
    assert_eq!(j["sources"][0]["added"], 10);
    assert_eq!(j["key_events"]["created"], j["customers"]);
    assert_eq!(j["linking"]["mode"], "full");
    edit(
        &d.join("crm.csv"),
        "c2",
        Some("c2,Marcus,Oyelaran,Springfield,62702,marcus.o@example.net,217-555-0102,07/02/1979"),
    );
    let (out, _) = refresh(d, &store, &["--json", "--dry-run"]);
    let j: serde_json::Value = serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {out}"));
    assert_eq!(j["committed"], false);
    assert_eq!(j["sources"][0]["changed"], 1);
    assert_eq!(j["linking"]["mode"], "incremental");
    assert_eq!(j["linking"]["changed_records"], 1);
    let o = run(
        &[
            "export",
            "--store",
            &store,
            "--out",
            d.join("pub").to_str().unwrap(),
            "--json",
        ],
        None,
    );
    let (out, err) = text(&o);
    assert!(o.status.success(), "{err}");
    let j: serde_json::Value = serde_json::from_str(&out).unwrap_or_else(|e| panic!("{e}: {out}"));
    assert_eq!(j["run"], 1);
    assert_eq!(j["crosswalk_rows"], 20);
    assert_eq!(j["files"].as_array().unwrap().len(), 2);
}
