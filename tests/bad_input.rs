//! Bad input: clear messages naming file, line, column or key, exit code 2.

use crate::common::*;

fn link_in(dir: &std::path::Path) -> (i32, String, String) {
    let o = link(dir, "out", &[], None);
    let (so, se) = text(&o);
    (o.status.code().unwrap_or(-1), so, se)
}

fn edit(dir: &std::path::Path, file: &str, from: &str, to: &str) {
    let p = dir.join(file);
    let s = std::fs::read_to_string(&p).unwrap();
    assert!(s.contains(from), "test setup: `{from}` not in {file}");
    std::fs::write(&p, s.replacen(from, to, 1)).unwrap();
}

#[test]
fn missing_column_lists_the_headers() {
    let dir = mini_copy();
    edit(dir.path(), "crm.csv", "id,first,last", "id,given,last");
    let (code, _, err) = link_in(dir.path());
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("crm.csv") && err.contains("`first`") && err.contains("`given`"),
        "{err}"
    );
}

#[test]
fn ragged_rows_and_invalid_utf8_go_to_rejects() {
    let dir = mini_copy();
    edit(
        dir.path(),
        "crm.csv",
        "c3,Lotte,Vandermeer,Riverton,82501,",
        "c3,Lotte,Vandermeer,Riverton,",
    );
    let p = dir.path().join("shop.csv");
    let mut bytes = std::fs::read(&p).unwrap();
    bytes.extend_from_slice(b"s11,\"Dubois, L\xe9a\",Eastport,04631,lea@example.com,,01.01.1990\n");
    std::fs::write(&p, bytes).unwrap();
    let (code, out, err) = link_in(dir.path());
    assert_eq!(code, 0, "{err}");
    assert!(out.contains("rejected"), "{out}");
    let rejects = read_csv(&dir.path().join("out/rejects.csv"));
    assert_eq!(rejects.len(), 3, "{rejects:?}");
    assert_eq!(rejects[1][..2], ["crm", "4"]);
    assert!(rejects[1][2].contains("fields"), "{rejects:?}");
    assert_eq!(rejects[2][..2], ["shop", "12"]);
    assert!(rejects[2][2].contains("UTF-8"), "{rejects:?}");
    let cw = read_csv(&dir.path().join("out/crosswalk.csv"));
    assert_eq!(cw.len(), 20, "19 records and the header");
}

#[test]
fn empty_file_is_refused() {
    let dir = mini_copy();
    std::fs::write(dir.path().join("shop.csv"), "").unwrap();
    let (code, _, err) = link_in(dir.path());
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("shop.csv") && err.contains("empty"), "{err}");
}

#[test]
fn spec_errors_name_the_key() {
    let dir = mini_copy();
    edit(
        dir.path(),
        "spec.toml",
        "date_order = \"dmy\"",
        "date_order = \"european\"",
    );
    let (code, _, err) = link_in(dir.path());
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("source[2].date_order") && err.contains("ymd, dmy, mdy"),
        "{err}"
    );
    assert!(err.contains("hint:"), "{err}");
}

#[test]
fn missing_spec_file() {
    let dir = tempfile::tempdir().unwrap();
    let (code, _, err) = link_in(dir.path());
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("spec.toml"), "{err}");
}

#[test]
fn duplicate_ids_are_listed() {
    let dir = mini_copy();
    edit(dir.path(), "crm.csv", "c4,Tomas", "c2,Tomas");
    let (code, _, err) = link_in(dir.path());
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("`c2` (lines 3 and 5)"), "{err}");
}

#[test]
fn a_failed_run_leaves_previous_outputs_intact() {
    let dir = mini_copy();
    let (code, _, err) = link_in(dir.path());
    assert_eq!(code, 0, "{err}");
    let before = std::fs::read(dir.path().join("out/crosswalk.csv")).unwrap();
    std::fs::write(dir.path().join("shop.csv"), "").unwrap();
    let (code, _, _) = link_in(dir.path());
    assert_eq!(code, 2);
    assert_eq!(
        before,
        std::fs::read(dir.path().join("out/crosswalk.csv")).unwrap()
    );
    let left: Vec<_> = std::fs::read_dir(dir.path().join("out/.samekey/runs"))
        .unwrap()
        .filter_map(|e| e.ok())
        .collect();
    assert_eq!(left.len(), 1, "partial run folder left behind: {left:?}");
}

#[test]
fn model_from_another_spec_is_refused_with_the_difference() {
    let dir = mini_copy();
    let (code, _, err) = link_in(dir.path());
    assert_eq!(code, 0, "{err}");
    edit(
        dir.path(),
        "spec.toml",
        "levels = [\"exact\", \"date_swap\"]",
        "levels = [\"exact\"]",
    );
    let model = dir.path().join("out/model.toml");
    let o = link(
        dir.path(),
        "o2",
        &["--model", model.to_str().unwrap()],
        None,
    );
    let (_, err) = text(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("birth_date: exact | date_swap | disagree"),
        "{err}"
    );
}

#[test]
fn unknown_flag_is_bad_input() {
    let o = run(&["link", "--spek", "x"], None);
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn a_country_that_is_not_iso_3166_is_refused() {
    let dir = mini_copy();
    edit(
        dir.path(),
        "spec.toml",
        "country = \"US\"",
        "country = \"XX\"",
    );
    let (code, _, err) = link_in(dir.path());
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("`XX` is not an ISO 3166"), "{err}");
}
