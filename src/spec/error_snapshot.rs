//! Snapshot of every spec error message: one bad spec per validation rule, each with the
//! key path and message it produces. The file `tests/snapshots/spec_errors.txt` pins them;
//! run with `UPDATE_SNAPSHOTS=1` to rewrite it after an intended change.

use std::path::Path;

use super::Spec;
use crate::error::Error;

/// A spec that passes validation; the cases below each break one thing in it.
pub(super) const GOOD: &str = r#"version = 1
[[source]]
name = "crm"
path = "crm.csv"
id = "id"
country = "us"
date_order = "mdy"
[source.columns]
given_name = "first"
family_name = "last"
birth_date = "dob"
[[source]]
name = "shop"
path = "data/shop.csv"
id = "account"
name_order = "family_first"
[source.columns]
full_name = "name"
email = "mail"
[[compare]]
attribute = "family_name"
levels = ["exact", "translit", "jaro_winkler >= 0.92"]
frequency = true
[[compare]]
attribute = "birth_date"
levels = ["exact", "date_swap", "same_year"]
[[block]]
name = "name"
keys = ["soundex(family_name)", "prefix(birth_date, 4)"]
[decide]
match_at = 0.95
review_at = 0.4
[model]
seed = 7
[cluster]
max_size = 20
one_record_per_source = ["shop"]
unique = ["email"]
"#;

/// (case name, text to replace in GOOD, replacement). An empty `from` means: replace the
/// whole spec by `to`; `@top:` before `from` means: drop `from` and write `to` at the top
/// level (after `version`), where TOML reads it as a key of the root table.
const CASES: &[(&str, &str, &str)] = &[
    ("syntax", "", "version = 1\n[[source]\nname = 1\n"),
    ("syntax_duplicate_key", "seed = 7", "seed = 7\nseed = 8"),
    ("top_unknown_key", "version = 1", "version = 1\nsources = 2"),
    ("top_two_unknown_keys", "version = 1", "version = 1\nzeta = 1\nalpha = 2"),
    ("version_missing", "version = 1", ""),
    ("version_unsupported", "version = 1", "version = 9"),
    ("version_date", "version = 1", "version = 2024-01-01"),
    ("version_string", "version = 1", "version = \"1\""),
    ("source_not_a_list", "", "version = 1\nsource = \"crm.csv\"\n"),
    ("source_item_not_a_table", "", "version = 1\nsource = [\"crm.csv\"]\n"),
    ("source_missing", "", "version = 1\n"),
    ("source_unknown_key", "id = \"account\"", "id = \"account\"\nheader = true"),
    ("source_name_missing", "name = \"crm\"", ""),
    ("source_name_empty", "name = \"crm\"", "name = \" \""),
    ("source_name_not_a_string", "name = \"crm\"", "name = 3"),
    ("source_name_bad_chars", "name = \"crm\"", "name = \"c r m\""),
    ("source_name_twice", "name = \"shop\"", "name = \"crm\""),
    ("source_name_date", "name = \"crm\"", "name = 2024-01-01"),
    ("source_path_missing", "path = \"crm.csv\"", ""),
    ("source_path_and_connection", "path = \"crm.csv\"", "path = \"crm.csv\"\nconnection = \"crm.db\"\ntable = \"contacts\""),
    ("source_table_without_connection", "path = \"crm.csv\"", "path = \"crm.csv\"\ntable = \"contacts\""),
    ("source_query_without_connection", "path = \"crm.csv\"", "path = \"crm.csv\"\nquery = \"SELECT * FROM contacts\""),
    ("source_connection_without_table", "path = \"crm.csv\"", "connection = \"crm.db\""),
    ("source_connection_table_and_query", "path = \"crm.csv\"", "connection = \"crm.db\"\ntable = \"contacts\"\nquery = \"SELECT * FROM contacts\""),
    ("source_connection_empty", "path = \"crm.csv\"", "connection = \" \"\ntable = \"contacts\""),
    ("source_connection_not_a_string", "path = \"crm.csv\"", "connection = 5432\ntable = \"contacts\""),
    ("source_connection_scheme", "path = \"crm.csv\"", "connection = \"mysql://ann:pw@db/crm\"\ntable = \"contacts\""),
    ("source_connection_bad_url", "path = \"crm.csv\"", "connection = \"postgres://ann:pw@db:port/crm\"\ntable = \"contacts\""),
    ("source_table_empty", "path = \"crm.csv\"", "connection = \"crm.db\"\ntable = \"\""),
    ("source_query_not_a_string", "path = \"crm.csv\"", "connection = \"crm.db\"\nquery = [\"SELECT 1\"]"),
    ("source_connection_with_delimiter", "path = \"crm.csv\"", "connection = \"crm.db\"\ntable = \"contacts\"\ndelimiter = \";\""),
    ("source_connection_with_encoding", "path = \"crm.csv\"", "connection = \"crm.db\"\ntable = \"contacts\"\nencoding = \"latin-1\""),
    ("source_id_missing", "id = \"id\"", ""),
    ("source_country_bad", "country = \"us\"", "country = \"usa\""),
    ("source_country_type", "country = \"us\"", "country = 1"),
    ("source_date_order_bad", "\"mdy\"", "\"myd\""),
    ("source_name_order_bad", "\"family_first\"", "\"last_first\""),
    ("source_delimiter_long", "id = \"id\"", "id = \"id\"\ndelimiter = \";;\""),
    ("source_delimiter_quote", "id = \"id\"", "id = \"id\"\ndelimiter = '\"'"),
    ("source_encoding_bad", "id = \"id\"", "id = \"id\"\nencoding = \"ebcdic\""),
    ("source_columns_missing", "[source.columns]\ngiven_name = \"first\"\nfamily_name = \"last\"\nbirth_date = \"dob\"\n", ""),
    ("source_columns_not_a_table", "[source.columns]\ngiven_name = \"first\"\nfamily_name = \"last\"\nbirth_date = \"dob\"\n", "columns = \"first\"\n"),
    ("source_columns_empty", "given_name = \"first\"\nfamily_name = \"last\"\nbirth_date = \"dob\"\n", ""),
    ("source_columns_unknown_attribute", "full_name = \"name\"", "fullname = \"name\""),
    ("source_columns_not_a_string", "full_name = \"name\"", "full_name = [\"name\"]"),
    ("compare_not_a_list", "@top:[[compare]]\nattribute = \"family_name\"\nlevels = [\"exact\", \"translit\", \"jaro_winkler >= 0.92\"]\nfrequency = true\n[[compare]]\nattribute = \"birth_date\"\nlevels = [\"exact\", \"date_swap\", \"same_year\"]\n", "compare = 1\n"),
    ("compare_missing", "[[compare]]\nattribute = \"family_name\"\nlevels = [\"exact\", \"translit\", \"jaro_winkler >= 0.92\"]\nfrequency = true\n[[compare]]\nattribute = \"birth_date\"\nlevels = [\"exact\", \"date_swap\", \"same_year\"]\n", ""),
    ("compare_unknown_key", "frequency = true", "frequency = true\nweight = 2"),
    ("compare_attribute_missing", "attribute = \"birth_date\"", ""),
    ("compare_attribute_unknown", "attribute = \"birth_date\"", "attribute = \"dob\""),
    ("compare_full_name", "attribute = \"birth_date\"\nlevels = [\"exact\", \"date_swap\", \"same_year\"]", "attribute = \"full_name\"\nlevels = [\"exact\"]"),
    ("compare_twice", "attribute = \"birth_date\"\nlevels = [\"exact\", \"date_swap\", \"same_year\"]", "attribute = \"family_name\"\nlevels = [\"exact\"]"),
    ("compare_levels_missing", "levels = [\"exact\", \"date_swap\", \"same_year\"]", ""),
    ("compare_levels_not_a_list", "levels = [\"exact\", \"date_swap\", \"same_year\"]", "levels = \"exact\""),
    ("compare_levels_empty", "levels = [\"exact\", \"date_swap\", \"same_year\"]", "levels = []"),
    ("compare_level_not_a_string", "\"date_swap\", \"same_year\"", "\"date_swap\", 3"),
    ("compare_level_unknown", "\"translit\"", "\"translit\", \"jw >= 2\""),
    ("compare_level_threshold_range", "jaro_winkler >= 0.92", "jaro_winkler >= 1.5"),
    ("compare_level_threshold_not_a_number", "jaro_winkler >= 0.92", "jaro >= high"),
    ("compare_level_levenshtein_range", "jaro_winkler >= 0.92", "levenshtein <= 9"),
    ("compare_level_levenshtein_name", "jaro_winkler >= 0.92", "hamming <= 2"),
    ("compare_level_date_on_name", "\"translit\", ", "\"date_swap\", "),
    ("compare_level_local_part_on_name", "\"translit\", ", "\"local_part\", "),
    ("compare_level_twice", "\"translit\", ", "\"exact\", "),
    ("compare_levels_too_many", "levels = [\"exact\", \"translit\", \"jaro_winkler >= 0.92\"]", "levels = [\"exact\", \"translit\", \"jaro_winkler >= 0.92\", \"jaro_winkler >= 0.91\", \"jaro_winkler >= 0.9\", \"jaro_winkler >= 0.89\", \"jaro_winkler >= 0.88\", \"jaro_winkler >= 0.87\", \"jaro_winkler >= 0.86\", \"jaro_winkler >= 0.85\", \"jaro_winkler >= 0.84\", \"jaro_winkler >= 0.83\", \"jaro_winkler >= 0.82\"]"),
    ("compare_frequency_not_a_bool", "frequency = true", "frequency = \"yes\""),
    ("compare_frequency_without_exact", "levels = [\"exact\", \"translit\", \"jaro_winkler >= 0.92\"]", "levels = [\"translit\"]"),
    ("block_missing", "[[block]]\nname = \"name\"\nkeys = [\"soundex(family_name)\", \"prefix(birth_date, 4)\"]\n", ""),
    ("block_unknown_key", "keys = [\"soundex", "size = 3\nkeys = [\"soundex"),
    ("block_name_missing", "name = \"name\"\nkeys", "keys"),
    ("block_name_twice", "[decide]", "[[block]]\nname = \"name\"\nkeys = [\"email\"]\n[decide]"),
    ("block_keys_missing", "keys = [\"soundex(family_name)\", \"prefix(birth_date, 4)\"]", ""),
    ("block_keys_empty", "keys = [\"soundex(family_name)\", \"prefix(birth_date, 4)\"]", "keys = []"),
    ("block_key_missing_paren", "prefix(birth_date, 4)", "prefix(birth_date, 4"),
    ("block_key_unknown_function", "prefix(birth_date, 4)", "suffix(birth_date, 4)"),
    ("block_key_prefix_without_length", "prefix(birth_date, 4)", "prefix(birth_date)"),
    ("block_key_prefix_length", "prefix(birth_date, 4)", "prefix(birth_date, 40)"),
    ("block_key_unknown_attribute", "soundex(family_name)", "soundex(surname)"),
    ("block_key_plain_unknown_attribute", "soundex(family_name)", "surname"),
    ("block_key_not_provided", "soundex(family_name)", "soundex(city)"),
    ("decide_not_a_table", "@top:[decide]\nmatch_at = 0.95\nreview_at = 0.4\n", "decide = 0.9\n"),
    ("decide_old_name", "[decide]", "[classify]"),
    ("decide_unknown_key", "review_at = 0.4", "review_at = 0.4\nthreshold = 3"),
    ("decide_not_a_number", "match_at = 0.95", "match_at = \"high\""),
    ("decide_match_at_range", "match_at = 0.95", "match_at = 1"),
    ("decide_review_at_range", "review_at = 0.4", "review_at = 0"),
    ("decide_order", "review_at = 0.4", "review_at = 0.99"),
    ("model_not_a_table", "@top:[model]\nseed = 7\n", "model = 7\n"),
    ("model_unknown_key", "seed = 7", "sed = 7"),
    ("model_seed_negative", "seed = 7", "seed = -1"),
    ("model_seed_float", "seed = 7", "seed = 7.5"),
    ("model_seed_date", "seed = 7", "seed = 1979-05-27"),
    ("model_u_sample_small", "seed = 7", "u_sample_pairs = 10"),
    ("model_iterations_zero", "seed = 7", "max_iterations = 0"),
    ("model_max_pairs_zero", "seed = 7", "max_pairs_per_key = 0"),
    ("cluster_not_a_table", "@top:[cluster]\nmax_size = 20\none_record_per_source = [\"shop\"]\nunique = [\"email\"]\n", "cluster = []\n"),
    ("cluster_unknown_key", "max_size = 20", "max_size = 20\nmin_size = 2"),
    ("cluster_max_size_small", "max_size = 20", "max_size = 1"),
    ("cluster_source_unknown", "[\"shop\"]", "[\"shops\"]"),
    ("cluster_source_not_a_list", "[\"shop\"]", "\"shop\""),
    ("cluster_source_not_a_string", "[\"shop\"]", "[1]"),
    ("cluster_unique_unknown", "unique = [\"email\"]", "unique = [\"mail\"]"),
];

fn render() -> String {
    let mut out = String::new();
    for (name, from, to) in CASES {
        let text = if from.is_empty() {
            to.to_string()
        } else if let Some(section) = from.strip_prefix("@top:") {
            assert!(
                GOOD.contains(section),
                "case {name}: `{section}` not in the spec"
            );
            GOOD.replacen(section, "", 1).replacen(
                "version = 1\n",
                &format!("version = 1\n{to}"),
                1,
            )
        } else {
            assert!(GOOD.contains(from), "case {name}: `{from}` not in the spec");
            GOOD.replacen(from, to, 1)
        };
        let line = match Spec::parse(&text, Path::new("/tmp/x/spec.toml")) {
            Err(Error::Spec { key, message, .. }) => format!("{key} | {message}"),
            Err(e) => format!("other error: {e}"),
            Ok(_) => "accepted".to_string(),
        };
        out.push_str(&format!("{name}: {line}\n"));
    }
    out
}

#[test]
fn good_spec_is_accepted() {
    Spec::parse(GOOD, Path::new("/tmp/x/spec.toml")).unwrap();
}

#[test]
fn every_spec_error_message_is_pinned() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/snapshots/spec_errors.txt");
    let got = render();
    if std::env::var_os("UPDATE_SNAPSHOTS").is_some() {
        std::fs::write(&path, &got).unwrap();
        return;
    }
    let want = std::fs::read_to_string(&path).unwrap_or_default();
    if got != want {
        let diff: Vec<String> = got
            .lines()
            .zip(want.lines().chain(std::iter::repeat("")))
            .filter(|(g, w)| g != w)
            .map(|(g, w)| format!("  got:  {g}\n  want: {w}"))
            .collect();
        panic!(
            "spec error messages changed (UPDATE_SNAPSHOTS=1 rewrites {}):\n{}",
            path.display(),
            diff.join("\n")
        );
    }
}
