//! Store tests on SQLite (always) and PostgreSQL (when `SAMEKEY_TEST_PG_URL` names a
//! server; `.ci/run` starts one, see `.ci/postgres.sh`).

use super::*;

/// A fresh PostgreSQL database for one test, or `None` (with a message) when no server
/// is configured.
pub(crate) fn pg_fresh(name: &str) -> Option<String> {
    let Ok(url) = std::env::var("SAMEKEY_TEST_PG_URL") else {
        eprintln!(
            "skipped: PostgreSQL test `{name}` needs SAMEKEY_TEST_PG_URL (see .ci/postgres.sh)"
        );
        return None;
    };
    let db = format!("samekey_t_{name}");
    let mut admin = ::postgres::Client::connect(&url, ::postgres::NoTls)
        .unwrap_or_else(|e| panic!("SAMEKEY_TEST_PG_URL is set but unusable: {e}"));
    admin
        .batch_execute(&format!("DROP DATABASE IF EXISTS {db} WITH (FORCE)"))
        .unwrap();
    admin
        .batch_execute(&format!("CREATE DATABASE {db}"))
        .unwrap();
    let (base, _) = url.rsplit_once('/').unwrap();
    Some(format!("{base}/{db}"))
}

fn sample_run(run: i64) -> RunRecord {
    RunRecord {
        run,
        started_at: "2026-12-01T02:00:00Z".into(),
        finished_at: "2026-12-01T02:01:00Z".into(),
        spec_fingerprint: "spec".into(),
        model_fingerprint: "model".into(),
        model_spec_fingerprint: "layout".into(),
        new_model: Some("lambda = 0.01".into()),
        inputs: vec![InputRow {
            source: "crm".into(),
            fingerprint: "f".into(),
            rows: 3,
            records: 3,
            rejected: 0,
        }],
        records: 3,
        customers: 2,
        match_edges: 1,
        review_edges: 0,
        added: 3,
        open: vec![
            ("crm".into(), "1".into(), "K1".into()),
            ("crm".into(), "2".into(), "K1".into()),
            ("crm".into(), "3".into(), "K3".into()),
        ],
        new_keys: vec!["K1".into(), "K3".into()],
        events: vec![
            EventRow {
                run,
                key: "K1".into(),
                event: "created".into(),
                other: None,
                records: 2,
            },
            EventRow {
                run,
                key: "K3".into(),
                event: "created".into(),
                other: None,
                records: 1,
            },
        ],
        edges: vec![EdgeRow {
            a: ("crm".into(), "1".into()),
            b: ("crm".into(), "2".into()),
            weight: 12.5,
            probability: 0.999,
            decision: "match".into(),
        }],
        set_fingerprints: vec![
            ("crm".into(), "1".into(), "a".into()),
            ("crm".into(), "2".into(), "b".into()),
            ("crm".into(), "3".into(), "c".into()),
        ],
        ..RunRecord::default()
    }
}

/// Round trip: a run written and committed is what the next refresh reads.
fn round_trip(location: &str) {
    let mut s = Store::open(location).unwrap();
    assert_eq!(s.version().unwrap(), schema::VERSION);
    assert_eq!(s.previous().unwrap().last_run, None);
    s.begin_refresh().unwrap();
    s.write_run(&sample_run(1)).unwrap();
    s.commit().unwrap();
    // Run 2: record 3 moves to K1 (merge), record 2 is deleted.
    s.begin_refresh().unwrap();
    let mut r2 = RunRecord {
        run: 2,
        close: vec![("crm".into(), "3".into()), ("crm".into(), "2".into())],
        open: vec![("crm".into(), "3".into(), "K1".into())],
        retired_keys: vec!["K3".into()],
        events: vec![EventRow {
            run: 2,
            key: "K3".into(),
            event: "merged_into".into(),
            other: Some("K1".into()),
            records: 0,
        }],
        drop_fingerprints: vec![("crm".into(), "2".into())],
        ..sample_run(2)
    };
    r2.new_keys.clear();
    r2.set_fingerprints.clear();
    r2.new_model = None;
    s.write_run(&r2).unwrap();
    s.commit().unwrap();
    drop(s);
    let mut s = Store::open(location).unwrap();
    let prev = s.previous().unwrap();
    assert_eq!(prev.last_run, Some(2));
    assert_eq!(prev.crosswalk.len(), 2);
    assert_eq!(prev.crosswalk[&("crm".into(), "3".into())], "K1");
    assert_eq!(prev.fingerprints.len(), 2);
    let k3 = prev.keys.iter().find(|k| k.key == "K3").unwrap();
    assert_eq!((k3.created_run, k3.retired_run), (1, Some(2)));
    assert_eq!(
        s.current_crosswalk().unwrap(),
        [
            ["crm".to_string(), "1".into(), "K1".into()],
            ["crm".to_string(), "3".into(), "K1".into()]
        ]
    );
    let ev = s.events_since(1).unwrap();
    assert_eq!(ev.len(), 1);
    assert_eq!(ev[0].other.as_deref(), Some("K1"));
    assert_eq!(s.events_since(0).unwrap().len(), 3);
    assert_eq!(
        s.latest_model("layout").unwrap().as_deref(),
        Some("lambda = 0.01")
    );
    // History keeps the closed rows.
    let hist = s
        .query(
            "SELECT COUNT(*) FROM crosswalk_history WHERE valid_to_run = $1",
            &[Value::Int(2)],
        )
        .unwrap();
    assert_eq!(hist[0][0], Value::Int(2));
    let runs = s.runs().unwrap();
    assert_eq!(runs.len(), 2);
}

/// A second writer is refused at once while the first holds the lock; a rolled-back run
/// leaves nothing.
fn lock_and_rollback(location: &str) {
    let mut a = Store::open(location).unwrap();
    let mut b = Store::open(location).unwrap();
    a.begin_refresh().unwrap();
    a.write_run(&sample_run(1)).unwrap();
    let e = b.begin_refresh().unwrap_err().to_string();
    assert!(e.contains("busy: another refresh is writing"), "{e}");
    // Readers still see the last committed state (none).
    assert!(b.current_crosswalk().unwrap().is_empty());
    a.rollback().unwrap();
    b.begin_refresh().unwrap();
    assert_eq!(b.previous().unwrap().last_run, None);
    b.rollback().unwrap();
}

/// The version 1 fixture (written by an old build) opens and is migrated forward.
fn fixture_v1_migrates(location: &str) {
    let mut s = Store::open(location).unwrap();
    assert_eq!(s.version().unwrap(), schema::VERSION);
    let prev = s.previous().unwrap();
    assert_eq!(prev.last_run, Some(2));
    assert_eq!(prev.crosswalk.len(), 5);
    assert_eq!(prev.crosswalk[&("crm".into(), "C2".into())], "CK-FIXTURE-A");
    assert!(prev.fingerprints.is_empty());
    assert_eq!(s.events_since(1).unwrap()[0].event, "merged_into");
    let runs = s
        .query("SELECT records_added FROM runs WHERE run_id = 2", &[])
        .unwrap();
    assert_eq!(runs[0][0], Value::Int(0));
    // And a new run can be written on top.
    s.begin_refresh().unwrap();
    let mut r = sample_run(3);
    r.new_keys = vec!["K1-new".into(), "K3-new".into()];
    for o in &mut r.open {
        o.0 = "web".into();
        o.2.push_str("-new");
    }
    r.events.clear();
    s.write_run(&r).unwrap();
    s.commit().unwrap();
    assert_eq!(s.current_crosswalk().unwrap().len(), 8);
}

fn temp_sqlite(dir: &tempfile::TempDir, name: &str) -> String {
    dir.path().join(name).display().to_string()
}

#[test]
fn sqlite_round_trip() {
    let dir = tempfile::tempdir().unwrap();
    round_trip(&temp_sqlite(&dir, "s.db"));
}

#[test]
fn sqlite_lock_and_rollback() {
    let dir = tempfile::tempdir().unwrap();
    lock_and_rollback(&temp_sqlite(&dir, "s.db"));
}

#[test]
fn sqlite_fixture_v1_migrates() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("v1.sqlite");
    std::fs::copy(
        concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/store/v1.sqlite"),
        &path,
    )
    .unwrap();
    fixture_v1_migrates(&path.display().to_string());
}

/// The version 2 fixture (two refreshes of the mini data by the build before version
/// 3) opens, is migrated forward, and has no link fingerprint (so the next refresh
/// links in full); its edges are found by record.
#[test]
fn sqlite_fixture_v2_migrates() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("v2.sqlite");
    std::fs::copy(
        concat!(env!("CARGO_MANIFEST_DIR"), "/tests/data/store/v2.sqlite"),
        &path,
    )
    .unwrap();
    let mut s = Store::open(&path.display().to_string()).unwrap();
    assert_eq!(s.version().unwrap(), schema::VERSION);
    let prev = s.previous().unwrap();
    assert_eq!(prev.last_run, Some(2));
    assert_eq!(prev.crosswalk.len(), 20);
    assert_eq!(prev.fingerprints.len(), 20);
    assert_eq!(prev.link_fingerprint, "");
    let edges = s.edges().unwrap();
    assert_eq!(edges.len(), 9);
    assert!(edges
        .iter()
        .all(|e| e.weight > 0.0 && e.decision == "match"));
    let plan = s
        .query(
            "EXPLAIN QUERY PLAN SELECT * FROM edges WHERE source_b = 'crm' AND id_b = 'c1'",
            &[],
        )
        .unwrap();
    let plan: Vec<String> = plan.iter().map(|r| r[r.len() - 1].text()).collect();
    assert!(plan.iter().any(|p| p.contains("edges_b")), "{plan:?}");
}

#[test]
fn sqlite_refuses_what_is_not_a_store() {
    let dir = tempfile::tempdir().unwrap();
    let text = dir.path().join("notes.txt");
    std::fs::write(
        &text,
        "this is not a database, just some text that is long enough",
    )
    .unwrap();
    let e = Store::open(&text.display().to_string()).unwrap_err();
    assert!(e.is_bad_input(), "{e}");
    assert!(e.to_string().contains("not a samekey store"), "{e}");
    let e = Store::open(&dir.path().display().to_string()).unwrap_err();
    assert!(e.to_string().contains("is a folder"), "{e}");
    let missing = dir.path().join("no/such/folder/s.db");
    let e = Store::open(&missing.display().to_string()).unwrap_err();
    assert!(e.to_string().contains("does not exist"), "{e}");
}

#[test]
fn sqlite_newer_schema_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let loc = temp_sqlite(&dir, "s.db");
    let mut s = Store::open(&loc).unwrap();
    s.query("UPDATE samekey_schema SET version = 99", &[])
        .unwrap();
    drop(s);
    let e = Store::open(&loc).unwrap_err().to_string();
    assert!(e.contains("schema version 99, newer"), "{e}");
}

#[test]
fn postgres_round_trip() {
    if let Some(url) = pg_fresh("round_trip") {
        round_trip(&url);
    }
}

#[test]
fn postgres_lock_and_rollback() {
    if let Some(url) = pg_fresh("lock") {
        lock_and_rollback(&url);
    }
}

#[test]
fn postgres_fixture_v1_migrates() {
    if let Some(url) = pg_fresh("fixture_v1") {
        let mut c = ::postgres::Client::connect(&url, ::postgres::NoTls).unwrap();
        c.batch_execute(include_str!("../../tests/data/store/v1.sql"))
            .unwrap();
        drop(c);
        fixture_v1_migrates(&url);
    }
}

#[test]
fn postgres_password_is_never_printed() {
    let Some(url) = pg_fresh("password") else {
        return;
    };
    // A wrong password: the error names the store without the password.
    let secret = "Wr0ng-Pa55word-xyz";
    let (scheme_user, rest) = url.split_once(':').unwrap();
    let rest = rest.trim_start_matches("//");
    let (user, after) = rest.split_once(':').unwrap();
    let (_, host_db) = after.split_once('@').unwrap();
    let bad = format!("{scheme_user}://{user}:{secret}@{host_db}");
    let e = Store::open(&bad).unwrap_err();
    let shown = format!("{e} {e:?}");
    assert!(!shown.contains(secret), "{shown}");
    assert!(shown.contains(":***@"), "{shown}");
    assert!(e.is_bad_input());
    // Nor does an open store show it.
    let s = Store::open(&url).unwrap();
    let real = password_of(&url).unwrap();
    assert!(!s.location().contains(&real));
    assert!(!format!("{s:?}").contains(&real));
}
