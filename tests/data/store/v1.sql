-- A run store of schema version 1 (invented data), kept to test that every
-- released schema version opens and is migrated forward. Never edit.

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

CREATE TABLE samekey_schema (version BIGINT NOT NULL);
INSERT INTO samekey_schema (version) VALUES (1);
INSERT INTO runs VALUES (1, '2026-11-02T02:00:00Z', '2026-11-02T02:03:10Z', 'spec0001', 'model0001', 5, 3, 2, 1, 3, 0, 0, 0);
INSERT INTO runs VALUES (2, '2026-11-09T02:00:00Z', '2026-11-09T02:02:55Z', 'spec0001', 'model0001', 5, 2, 3, 0, 0, 1, 0, 0);
INSERT INTO run_inputs VALUES (1, 'crm', 'in-crm-1', 3, 3, 0);
INSERT INTO run_inputs VALUES (1, 'shop', 'in-shop-1', 3, 2, 1);
INSERT INTO run_inputs VALUES (2, 'crm', 'in-crm-2', 3, 3, 0);
INSERT INTO run_inputs VALUES (2, 'shop', 'in-shop-2', 2, 2, 0);
INSERT INTO customer_keys VALUES ('CK-FIXTURE-A', 1, NULL);
INSERT INTO customer_keys VALUES ('CK-FIXTURE-B', 1, 2);
INSERT INTO customer_keys VALUES ('CK-FIXTURE-C', 1, NULL);
INSERT INTO crosswalk_history VALUES ('crm', 'C1', 'CK-FIXTURE-A', 1, NULL);
INSERT INTO crosswalk_history VALUES ('shop', 'S1', 'CK-FIXTURE-A', 1, NULL);
INSERT INTO crosswalk_history VALUES ('crm', 'C2', 'CK-FIXTURE-B', 1, 2);
INSERT INTO crosswalk_history VALUES ('crm', 'C2', 'CK-FIXTURE-A', 2, NULL);
INSERT INTO crosswalk_history VALUES ('crm', 'C3', 'CK-FIXTURE-C', 1, NULL);
INSERT INTO crosswalk_history VALUES ('shop', 'S2', 'CK-FIXTURE-C', 1, NULL);
INSERT INTO key_events VALUES (1, 'CK-FIXTURE-A', 'created', NULL, 2);
INSERT INTO key_events VALUES (1, 'CK-FIXTURE-B', 'created', NULL, 1);
INSERT INTO key_events VALUES (1, 'CK-FIXTURE-C', 'created', NULL, 2);
INSERT INTO key_events VALUES (2, 'CK-FIXTURE-B', 'merged_into', 'CK-FIXTURE-A', 0);
INSERT INTO edges VALUES (2, 'crm', 'C1', 'shop', 'S1', 14.5, 0.999, 'match');
INSERT INTO edges VALUES (2, 'crm', 'C1', 'crm', 'C2', 9.25, 0.98, 'match');
INSERT INTO edges VALUES (2, 'crm', 'C3', 'shop', 'S2', 11.0, 0.995, 'match');
INSERT INTO models VALUES ('model0001', 'layout0001', 1, '2026-11-02T02:03:10Z', '# fixture model body');
