//! Sources read from databases: the mini CRM file loaded into a SQLite table (always)
//! and a PostgreSQL table (when `SAMEKEY_TEST_PG_URL` names a server; `.ci/run` starts
//! one, see `.ci/postgres.sh`; otherwise these skip with a message). A database source
//! must link exactly like the CSV file it was loaded from; bad rows go to the rejects
//! with their row number and id; bad connections, tables, queries and columns are
//! clear errors (exit 2) that never show the password.

use std::path::Path;

use crate::common::{link, mini, mini_copy, read_csv, run, text};

/// The CRM file's header and rows, as text.
fn crm_rows() -> (Vec<String>, Vec<Vec<String>>) {
    let mut all = read_csv(&mini().join("crm.csv"));
    let header = all.remove(0);
    (header, all)
}

/// Load the CRM file into table `contacts` of a new SQLite file `dir/crm.db` (every
/// column as text, so that postcodes keep their leading zeros).
fn crm_to_sqlite(dir: &Path) {
    let (header, rows) = crm_rows();
    let c = rusqlite::Connection::open(dir.join("crm.db")).unwrap();
    let cols: Vec<String> = header.iter().map(|h| format!("\"{h}\" TEXT")).collect();
    c.execute_batch(&format!("CREATE TABLE contacts ({})", cols.join(", ")))
        .unwrap();
    let marks = vec!["?"; header.len()].join(", ");
    let mut st = c
        .prepare(&format!("INSERT INTO contacts VALUES ({marks})"))
        .unwrap();
    for r in &rows {
        st.execute(rusqlite::params_from_iter(r.iter())).unwrap();
    }
}

/// Point the spec's CRM source at a database: `lines` replace `path = "crm.csv"`.
fn crm_from(dir: &Path, lines: &str) {
    let p = dir.join("spec.toml");
    let s = std::fs::read_to_string(&p).unwrap();
    assert!(s.contains("path = \"crm.csv\""));
    std::fs::write(&p, s.replacen("path = \"crm.csv\"", lines, 1)).unwrap();
}

/// `samekey link` into `dir/out`: (exit code, stdout, stderr).
fn link_in(dir: &Path) -> (i32, String, String) {
    let o = link(dir, "out", &[], None);
    let (so, se) = text(&o);
    (o.status.code().unwrap_or(-1), so, se)
}

/// The crosswalk of a finished run, header included.
fn crosswalk(dir: &Path) -> Vec<Vec<String>> {
    read_csv(&dir.join("out/crosswalk.csv"))
}

/// The crosswalk of the mini data read from CSV files only.
fn csv_crosswalk() -> Vec<Vec<String>> {
    let dir = mini_copy();
    let (code, _, err) = link_in(dir.path());
    assert_eq!(code, 0, "{err}");
    let cw = crosswalk(dir.path());
    // Cross-source matches exist, so equality below says something about linking.
    let keys =
        |s: &str| -> Vec<&String> { cw.iter().filter(|r| r[0] == s).map(|r| &r[2]).collect() };
    let crm = keys("crm");
    assert!(keys("shop").iter().any(|k| crm.contains(k)), "{cw:?}");
    cw
}

#[test]
fn sqlite_table_links_like_the_csv_file() {
    let expected = csv_crosswalk();
    let dir = mini_copy();
    crm_to_sqlite(dir.path());
    std::fs::remove_file(dir.path().join("crm.csv")).unwrap();
    crm_from(dir.path(), "connection = \"crm.db\"\ntable = \"contacts\"");
    let (code, out, err) = link_in(dir.path());
    assert_eq!(code, 0, "{out}\n{err}");
    assert_eq!(crosswalk(dir.path()), expected);
    // A read-only query gives the same, and the file is left as it was.
    let before = std::fs::read(dir.path().join("crm.db")).unwrap();
    let spec = dir.path().join("spec.toml");
    let s = std::fs::read_to_string(&spec).unwrap();
    std::fs::write(
        &spec,
        s.replace(
            "table = \"contacts\"",
            "query = \"SELECT * FROM contacts ORDER BY id DESC\"",
        ),
    )
    .unwrap();
    let (code, out, err) = link_in(dir.path());
    assert_eq!(code, 0, "{out}\n{err}");
    // The rows come in another order: the same keys, listed in that order.
    let sorted = |mut cw: Vec<Vec<String>>| {
        cw.sort();
        cw
    };
    let got = crosswalk(dir.path());
    assert_eq!(got[1][..2], ["crm".to_string(), "c9".to_string()]);
    assert_eq!(sorted(got), sorted(expected));
    assert_eq!(std::fs::read(dir.path().join("crm.db")).unwrap(), before);
}

#[test]
fn bad_database_rows_go_to_the_rejects_with_their_id() {
    let dir = mini_copy();
    crm_to_sqlite(dir.path());
    let c = rusqlite::Connection::open(dir.path().join("crm.db")).unwrap();
    c.execute_batch(
        "INSERT INTO contacts (id, first, last) VALUES (NULL, 'No', 'Id');
         INSERT INTO contacts (id, first, last) VALUES ('c90', x'ff00', 'Blob');
         INSERT INTO contacts (id, first, last) VALUES ('c91', 'Kept', 'Row');",
    )
    .unwrap();
    let rows: i64 = c
        .query_row("SELECT COUNT(*) FROM contacts", [], |r| r.get(0))
        .unwrap();
    drop(c);
    crm_from(dir.path(), "connection = \"crm.db\"\ntable = \"contacts\"");
    let (code, out, err) = link_in(dir.path());
    assert_eq!(code, 0, "{out}\n{err}");
    let rejects = read_csv(&dir.path().join("out/rejects.csv"));
    assert_eq!(rejects[0], ["source", "line", "reason"]);
    let (n, m) = (rows - 2, rows - 1);
    assert_eq!(rejects.len(), 3, "{rejects:?}");
    assert_eq!(rejects[1][..2], ["crm".to_string(), n.to_string()]);
    assert_eq!(rejects[1][2], "empty or NULL id in column `id`");
    assert_eq!(rejects[2][..2], ["crm".to_string(), m.to_string()]);
    assert!(
        rejects[2][2].starts_with("row id `c90`: binary value in column `first`"),
        "{rejects:?}"
    );
    let cw = crosswalk(dir.path());
    assert!(cw.iter().any(|r| r[0] == "crm" && r[1] == "c91"), "{cw:?}");
    assert!(!cw.iter().any(|r| r[1] == "c90"), "{cw:?}");
}

#[test]
fn database_errors_are_clear_and_exit_2() {
    let dir = mini_copy();
    crm_to_sqlite(dir.path());
    let spec = dir.path().join("spec.toml");
    let original = std::fs::read_to_string(&spec).unwrap();
    let cases: &[(&str, &str, &[&str])] = &[
        (
            "missing table",
            "connection = \"crm.db\"\ntable = \"contact\"",
            &[
                "source `crm`: table `contact` cannot be read: no such table: contact",
                "the file has tables: contacts",
            ],
        ),
        (
            "missing file",
            "connection = \"nope.db\"\ntable = \"contacts\"",
            &["nope.db", "the SQLite file is not there"],
        ),
        (
            "query that writes",
            "connection = \"crm.db\"\nquery = \"DELETE FROM contacts RETURNING *\"",
            &["the query must only read"],
        ),
        (
            "missing mapped column",
            "connection = \"crm.db\"\nquery = \"SELECT id, first, last, city, zip, email, phone FROM contacts\"",
            &[
                "the query has no column `dob` (the mapped column in the spec)",
                "its columns are: `id`, `first`",
            ],
        ),
        (
            "unknown scheme",
            "connection = \"mysql://ann:hunter2@db/crm\"\ntable = \"contacts\"",
            &[
                "key `source[1].connection`",
                "mysql://ann:***@db/crm",
                "unknown scheme `mysql`",
            ],
        ),
        (
            "bad PostgreSQL URL",
            "connection = \"postgres://ann:hunter2@db:port/crm\"\ntable = \"contacts\"",
            &[
                "key `source[1].connection`",
                "not a usable PostgreSQL URL",
            ],
        ),
        (
            "duplicate ids",
            "connection = \"crm.db\"\nquery = \"SELECT * FROM contacts UNION ALL SELECT * FROM contacts WHERE id = 'c2'\"",
            &["1 duplicate id(s) in column `id` of the query: `c2` (rows 2 and 11)"],
        ),
    ];
    for (what, lines, expected) in cases {
        std::fs::write(&spec, original.replacen("path = \"crm.csv\"", lines, 1)).unwrap();
        let (code, out, err) = link_in(dir.path());
        assert_eq!(code, 2, "{what}: {out}\n{err}");
        for e in *expected {
            assert!(err.contains(e), "{what}: `{e}` not in\n{err}");
        }
        assert!(
            !err.contains("hunter2") && !out.contains("hunter2"),
            "{what}: {err}"
        );
        assert!(!err.contains("panicked"), "{what}: {err}");
    }
    // Nothing was written to the source.
    let c = rusqlite::Connection::open(dir.path().join("crm.db")).unwrap();
    let n: i64 = c
        .query_row("SELECT COUNT(*) FROM contacts", [], |r| r.get(0))
        .unwrap();
    assert_eq!(n as usize, crm_rows().1.len());
}

#[test]
fn refresh_reads_a_database_source_and_sees_a_changed_row() {
    let dir = mini_copy();
    crm_to_sqlite(dir.path());
    crm_from(dir.path(), "connection = \"crm.db\"\ntable = \"contacts\"");
    let spec = dir.path().join("spec.toml");
    let store = dir.path().join("store.db");
    let refresh = || {
        let o = run(
            &[
                "refresh",
                "--spec",
                spec.to_str().unwrap(),
                "--store",
                store.to_str().unwrap(),
            ],
            None,
        );
        let (out, err) = text(&o);
        assert!(o.status.success(), "{out}\n{err}");
        out
    };
    refresh();
    let c = rusqlite::Connection::open(dir.path().join("crm.db")).unwrap();
    c.execute(
        "UPDATE contacts SET email = 'anna.b@example.net' WHERE id = 'c1'",
        [],
    )
    .unwrap();
    drop(c);
    let out = refresh();
    let crm_line = out
        .lines()
        .find(|l| l.trim_start().starts_with("crm "))
        .unwrap_or_else(|| panic!("{out}"));
    let counts: Vec<&str> = crm_line.split_whitespace().collect();
    // source, records, added, changed, deleted, rejected
    assert_eq!(counts[2..], ["0", "1", "0", "0"], "{out}");
}

/// A fresh PostgreSQL database holding the CRM rows in `crm.contacts`, or `None`.
fn pg_with_crm(name: &str) -> Option<String> {
    let Ok(url) = std::env::var("SAMEKEY_TEST_PG_URL") else {
        eprintln!(
            "skipped: PostgreSQL source test `{name}` needs SAMEKEY_TEST_PG_URL (see .ci/postgres.sh)"
        );
        return None;
    };
    let db = format!("samekey_src_{name}");
    let mut admin = postgres::Client::connect(&url, postgres::NoTls)
        .unwrap_or_else(|e| panic!("SAMEKEY_TEST_PG_URL is set but unusable: {e}"));
    admin
        .batch_execute(&format!("DROP DATABASE IF EXISTS {db} WITH (FORCE)"))
        .unwrap();
    admin
        .batch_execute(&format!("CREATE DATABASE {db}"))
        .unwrap();
    let (base, _) = url.rsplit_once('/').unwrap();
    let url = format!("{base}/{db}");
    let mut c = postgres::Client::connect(&url, postgres::NoTls).unwrap();
    let (header, rows) = crm_rows();
    let cols: Vec<String> = header.iter().map(|h| format!("\"{h}\" TEXT")).collect();
    c.batch_execute(&format!(
        "CREATE SCHEMA crm; CREATE SEQUENCE crm.counter; CREATE TABLE crm.contacts ({})",
        cols.join(", ")
    ))
    .unwrap();
    let marks: Vec<String> = (1..=header.len()).map(|i| format!("${i}")).collect();
    let insert = format!("INSERT INTO crm.contacts VALUES ({})", marks.join(", "));
    for r in &rows {
        let params: Vec<&(dyn postgres::types::ToSql + Sync)> = r
            .iter()
            .map(|v| v as &(dyn postgres::types::ToSql + Sync))
            .collect();
        c.execute(&insert, &params).unwrap();
    }
    Some(url)
}

#[test]
fn postgres_table_links_like_the_csv_file() {
    let Some(url) = pg_with_crm("link") else {
        return;
    };
    let password = url
        .split_once("://")
        .and_then(|(_, r)| r.split_once('@'))
        .and_then(|(auth, _)| auth.split_once(':'))
        .map(|(_, p)| p.to_string())
        .expect("the test URL has a password");
    let expected = csv_crosswalk();
    let dir = mini_copy();
    crm_from(
        dir.path(),
        &format!("connection = \"{url}\"\ntable = \"crm.contacts\""),
    );
    let (code, out, err) = link_in(dir.path());
    assert_eq!(code, 0, "{out}\n{err}");
    assert_eq!(crosswalk(dir.path()), expected);
    assert!(!out.contains(&password) && !err.contains(&password));
    // The password can stay out of the spec: PGPASSWORD supplies it.
    let bare = url.replace(&format!(":{password}@"), "@");
    let spec = dir.path().join("spec.toml");
    let s = std::fs::read_to_string(&spec).unwrap().replace(&url, &bare);
    std::fs::write(&spec, &s).unwrap();
    let o = std::process::Command::new(crate::common::bin())
        .args(["link", "--spec", spec.to_str().unwrap(), "--out"])
        .arg(dir.path().join("out"))
        .env("PGPASSWORD", &password)
        .output()
        .unwrap();
    let (out, err) = text(&o);
    assert!(o.status.success(), "{out}\n{err}");
    assert_eq!(crosswalk(dir.path()), expected);
    // Errors: a missing table, a query that writes, a missing column and a wrong
    // password exit 2, without the password.
    let cases: &[(&str, &str, &str)] = &[
        (
            "table = \"crm.contacts\"",
            "table = \"crm.contact\"",
            "\"crm.contact\" does not exist",
        ),
        (
            "table = \"crm.contacts\"",
            "query = \"SELECT id, nextval('crm.counter') FROM crm.contacts\"",
            "read-only transaction",
        ),
        (
            "table = \"crm.contacts\"",
            "query = \"SELECT id, first FROM crm.contacts\"",
            "has no column `last`",
        ),
        (&bare, &url.replace(&password, "wrong-pw"), "cannot connect"),
    ];
    for (from, to, expected) in cases {
        std::fs::write(&spec, s.replace(from, to)).unwrap();
        let o = std::process::Command::new(crate::common::bin())
            .args(["link", "--spec", spec.to_str().unwrap(), "--out"])
            .arg(dir.path().join("out"))
            .env("PGPASSWORD", &password)
            .output()
            .unwrap();
        let (out, err) = text(&o);
        assert_eq!(o.status.code(), Some(2), "{to}: {out}\n{err}");
        assert!(err.contains(expected), "{to}: `{expected}` not in\n{err}");
        for secret in [password.as_str(), "wrong-pw"] {
            assert!(!err.contains(secret) && !out.contains(secret), "{err}");
        }
    }
}
