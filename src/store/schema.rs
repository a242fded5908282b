//! The run store's schema: numbered migrations, applied in order inside one transaction.
//!
//! The SQL is written once for both back ends (SQLite and PostgreSQL): `BIGINT`,
//! `DOUBLE PRECISION` and `TEXT` columns, no engine-specific types, ids assigned by the
//! program. A store records its version in `samekey_schema`; opening an older store applies
//! the missing migrations; opening a newer one is refused (a newer samekey wrote it).
//!
//! Never edit a migration that has been released: add a new one. `tests/data/store/`
//! holds a store of every version, which must keep opening (see `tests/store.rs`).

/// Migrations, index `i` takes a store from version `i` to version `i + 1`.
pub const MIGRATIONS: &[&str] = &[V1, V2, V3];

/// The schema version this build writes.
pub const VERSION: i64 = MIGRATIONS.len() as i64;

/// Version 1: runs, crosswalk history, keys and key events, edges, review decisions,
/// models, and the `current_crosswalk` view.
const V1: &str = "
CREATE TABLE runs (
    run_id BIGINT PRIMARY KEY,
    started_at TEXT NOT NULL,
    finished_at TEXT NOT NULL,
    spec_fingerprint TEXT NOT NULL,
    model_fingerprint TEXT NOT NULL,
    records BIGINT NOT NULL,
    customers BIGINT NOT NULL,
    match_edges BIGINT NOT NULL,
    review_edges BIGINT NOT NULL,
    keys_created BIGINT NOT NULL,
    keys_merged BIGINT NOT NULL,
    keys_split BIGINT NOT NULL,
    keys_retired BIGINT NOT NULL
);
CREATE TABLE run_inputs (
    run_id BIGINT NOT NULL,
    source TEXT NOT NULL,
    fingerprint TEXT NOT NULL,
    rows_read BIGINT NOT NULL,
    records BIGINT NOT NULL,
    rejected BIGINT NOT NULL,
    PRIMARY KEY (run_id, source)
);
CREATE TABLE customer_keys (
    customer_key TEXT PRIMARY KEY,
    created_run BIGINT NOT NULL,
    retired_run BIGINT
);
CREATE TABLE crosswalk_history (
    source TEXT NOT NULL,
    source_id TEXT NOT NULL,
    customer_key TEXT NOT NULL,
    valid_from_run BIGINT NOT NULL,
    valid_to_run BIGINT
);
CREATE INDEX crosswalk_history_record ON crosswalk_history (source, source_id);
CREATE INDEX crosswalk_history_open ON crosswalk_history (valid_to_run);
CREATE TABLE key_events (
    run_id BIGINT NOT NULL,
    customer_key TEXT NOT NULL,
    event TEXT NOT NULL,
    other_key TEXT,
    records BIGINT NOT NULL
);
CREATE INDEX key_events_run ON key_events (run_id);
CREATE TABLE edges (
    run_id BIGINT NOT NULL,
    source_a TEXT NOT NULL,
    id_a TEXT NOT NULL,
    source_b TEXT NOT NULL,
    id_b TEXT NOT NULL,
    weight DOUBLE PRECISION NOT NULL,
    probability DOUBLE PRECISION NOT NULL,
    decision TEXT NOT NULL
);
CREATE TABLE review_decisions (
    source_a TEXT NOT NULL,
    id_a TEXT NOT NULL,
    source_b TEXT NOT NULL,
    id_b TEXT NOT NULL,
    decision TEXT NOT NULL,
    decided_by TEXT,
    decided_at TEXT NOT NULL,
    note TEXT
);
CREATE TABLE models (
    model_fingerprint TEXT NOT NULL,
    spec_fingerprint TEXT NOT NULL,
    run_id BIGINT NOT NULL,
    created_at TEXT NOT NULL,
    body TEXT NOT NULL
);
CREATE VIEW current_crosswalk AS
    SELECT source, source_id, customer_key, valid_from_run
    FROM crosswalk_history WHERE valid_to_run IS NULL;
";

/// Version 2: records added, changed and deleted per run, and a fingerprint of each current record's standardized values, so that a
/// refresh can tell changed records from unchanged ones. Stores of version 1 start with
/// no fingerprints: their next refresh counts every record as changed once.
const V2: &str = "
CREATE TABLE record_fingerprints (
    source TEXT NOT NULL,
    source_id TEXT NOT NULL,
    fingerprint TEXT NOT NULL,
    changed_run BIGINT NOT NULL,
    PRIMARY KEY (source, source_id)
);
ALTER TABLE runs ADD COLUMN records_added BIGINT NOT NULL DEFAULT 0;
ALTER TABLE runs ADD COLUMN records_changed BIGINT NOT NULL DEFAULT 0;
ALTER TABLE runs ADD COLUMN records_deleted BIGINT NOT NULL DEFAULT 0;
";

/// Version 3: what an incremental refresh needs. `runs.link_fingerprint` fingerprints
/// what decides a pair's score (samekey's version, the spec text and the model), so that
/// the stored edges are reused only by a run that would score them the same;
/// `runs.incremental` says how the run linked (1: only the pairs of new and changed
/// records were compared). Edges are found by either record. Stores of version 2 have no
/// link fingerprint: their next refresh is a full one.
const V3: &str = "
ALTER TABLE runs ADD COLUMN link_fingerprint TEXT NOT NULL DEFAULT '';
ALTER TABLE runs ADD COLUMN incremental BIGINT NOT NULL DEFAULT 0;
CREATE INDEX edges_a ON edges (source_a, id_a);
CREATE INDEX edges_b ON edges (source_b, id_b);
";
