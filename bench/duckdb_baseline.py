#!/usr/bin/env python3
"""Baseline linkage in plain DuckDB SQL, the way an analyst without samekey would do it.

In: a folder written by `samekey synth` (crm_contacts.csv, webshop_accounts.csv,
support_tickets.csv). Out: a crosswalk CSV with header `source,source_id,customer_key`
(one row per input record) and, on stderr, the time spent per step.

Steps:
1. load the three CSV files as text columns;
2. standardize in SQL: lower case, accents and punctuation stripped, a short list of
   titles and suffixes removed, full names split by each source's convention
   (webshop "Family, Given", support "Given Family"), dates parsed per source format into
   ISO dates, phones to digits with a simple country-code rule, e-mails lower-cased;
3. UNION ALL into one table;
4. self-join on a simple name block: same first 3 letters of the family name and same
   first letter of the given name;
5. keep pairs with Jaro-Winkler(family) >= 0.9 and Jaro-Winkler(given) >= 0.85 and
   (same birth date or same e-mail or same phone);
6. connected components of the kept pairs by iterative minimum-label propagation in SQL;
7. write the crosswalk.

Usage: duckdb_baseline.py --data DIR --out FILE [--threads 2]
"""

import argparse
import sys
import time

import duckdb

# Titles and name suffixes an analyst would see in the data and strip (common practice,
# no source): courtesy and academic titles of the English, German, French, Spanish and
# Dutch conventions, and generational suffixes.
TITLES = [
    "mr", "mrs", "ms", "miss", "mx", "dr", "dra", "prof", "pr", "rev",
    "herr", "frau", "dipl", "ing",
    "mme", "madame", "mlle", "monsieur",
    "sr", "sra", "srta", "dna", "don",
    "dhr", "mevr", "mevrouw", "mw", "drs", "ir", "heer",
    "jr", "ii", "iii", "iv",
]

# Phone country code of each source's home country (the web shop is German, the support
# desk British, the CRM North American).
HOME_CC = {"crm": "1", "webshop": "49", "support": "44"}


def log(msg):
    print(msg, file=sys.stderr, flush=True)


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--data", required=True, help="folder with the three source CSV files")
    ap.add_argument("--out", required=True, help="crosswalk CSV to write")
    ap.add_argument("--threads", type=int, default=2)
    ap.add_argument("--max-iterations", type=int, default=100,
                    help="limit of label-propagation rounds")
    args = ap.parse_args()

    t_all = time.perf_counter()
    timings = []

    def step(name, t0):
        t1 = time.perf_counter()
        timings.append((name, t1 - t0))
        return t1

    con = duckdb.connect()
    con.execute(f"SET threads={int(args.threads)}")
    con.execute("SET preserve_insertion_order=false")
    titles_sql = "[" + ",".join(f"'{t}'" for t in TITLES) + "]"

    # --- 1. load ---------------------------------------------------------------------
    t = time.perf_counter()
    for table, file in [
        ("crm", "crm_contacts.csv"),
        ("webshop", "webshop_accounts.csv"),
        ("support", "support_tickets.csv"),
    ]:
        path = f"{args.data}/{file}".replace("'", "''")
        con.execute(
            f"CREATE TABLE raw_{table} AS SELECT * FROM read_csv('{path}', header=true, "
            f"all_varchar=true, quote='\"', escape='\"')"
        )
    t = step("load", t)

    # --- 2./3. standardize and union -------------------------------------------------
    # Cleaning macros: text -> lower case ASCII words separated by single spaces.
    con.execute(
        r"""
        CREATE MACRO clean(s) AS
            trim(regexp_replace(regexp_replace(lower(strip_accents(coalesce(s, ''))),
                 '[^a-z0-9 ]', ' ', 'g'), ' +', ' ', 'g'));
        """
    )
    # Words of a name without titles and suffixes.
    con.execute(
        f"""
        CREATE MACRO name_words(s) AS
            list_filter(string_split(clean(s), ' '),
                        w -> w <> '' AND NOT list_contains({titles_sql}, w));
        """
    )
    # Digits of a phone with a simple country-code rule: "+" or "00" means the country
    # code is written; "011" is the North-American international prefix; otherwise
    # the number is national: drop the trunk 0 and add the source's home country code.
    con.execute(
        r"""
        CREATE MACRO phone_digits(p) AS
            regexp_replace(replace(coalesce(p, ''), '(0)', ''), '[^0-9]', '', 'g');
        CREATE MACRO phone_norm(p, cc) AS
            CASE
                WHEN phone_digits(p) = '' THEN NULL
                WHEN starts_with(trim(p), '+') THEN phone_digits(p)
                WHEN starts_with(phone_digits(p), '00') THEN phone_digits(p)[3:]
                WHEN starts_with(phone_digits(p), '011') THEN phone_digits(p)[4:]
                WHEN cc = '1' AND length(phone_digits(p)) = 11
                     AND starts_with(phone_digits(p), '1') THEN phone_digits(p)
                ELSE cc || ltrim(phone_digits(p), '0')
            END;
        CREATE MACRO nullif_empty(s) AS nullif(trim(coalesce(s, '')), '');
        """
    )
    con.execute(
        f"""
        CREATE TABLE recs AS
        WITH src AS (
            SELECT 'crm' AS source, contact_id AS source_id,
                   name_words(first_name) AS gw, name_words(last_name) AS fw,
                   try_strptime(dob, '%m/%d/%Y')::DATE AS birth,
                   phone_norm(phone, '{HOME_CC["crm"]}') AS phone,
                   lower(nullif_empty(email)) AS email
            FROM raw_crm
            UNION ALL
            -- "Family, Given"; without the comma the family name comes first.
            SELECT 'webshop', account_id,
                   CASE WHEN contains(name, ',')
                        THEN name_words(split_part(name, ',', 2))
                        ELSE name_words(name)[2:] END,
                   CASE WHEN contains(name, ',')
                        THEN name_words(split_part(name, ',', 1))
                        ELSE name_words(name)[1:1] END,
                   try_strptime(birthday, '%d.%m.%Y')::DATE,
                   phone_norm(phone, '{HOME_CC["webshop"]}'),
                   lower(nullif_empty(email))
            FROM raw_webshop
            UNION ALL
            -- "Given Family": the first word is the given name, the rest the family.
            SELECT 'support', ticket_id,
                   name_words(customer_name)[1:1],
                   name_words(customer_name)[2:],
                   try_strptime(date_of_birth, '%Y-%m-%d')::DATE,
                   phone_norm(phone, '{HOME_CC["support"]}'),
                   lower(nullif_empty(email))
            FROM raw_support
        )
        SELECT row_number() OVER () AS rid, source, source_id,
               nullif(coalesce(gw[1], ''), '') AS given,
               nullif(array_to_string(fw, ' '), '') AS family,
               birth, phone, email
        FROM src
        """
    )
    n_recs = con.execute("SELECT count(*) FROM recs").fetchone()[0]
    t = step("standardize", t)

    # --- 4./5. block and score ---------------------------------------------------------
    con.execute(
        """
        CREATE TABLE edges AS
        WITH b AS (
            SELECT rid, given, family, birth, phone, email,
                   left(family, 3) AS fam3, left(given, 1) AS giv1
            FROM recs
            WHERE family IS NOT NULL AND given IS NOT NULL
        )
        SELECT x.rid AS a, y.rid AS b
        FROM b x JOIN b y
          ON x.fam3 = y.fam3 AND x.giv1 = y.giv1 AND x.rid < y.rid
        WHERE (x.birth = y.birth OR x.email = y.email OR x.phone = y.phone)
          AND jaro_winkler_similarity(x.family, y.family) >= 0.9
          AND jaro_winkler_similarity(x.given, y.given) >= 0.85
        """
    )
    n_edges = con.execute("SELECT count(*) FROM edges").fetchone()[0]
    t = step("block and score", t)

    # --- 6. connected components: minimum-label propagation -------------------------------
    con.execute(
        """
        CREATE TABLE adj AS
            SELECT a AS src, b AS dst FROM edges
            UNION ALL SELECT b, a FROM edges
            UNION ALL SELECT DISTINCT a, a FROM edges
            UNION ALL SELECT DISTINCT b, b FROM edges;
        CREATE TABLE lab AS SELECT DISTINCT src AS rid, src AS label FROM adj;
        """
    )
    rounds = 0
    while True:
        rounds += 1
        con.execute(
            """
            CREATE OR REPLACE TABLE lab2 AS
            SELECT adj.src AS rid, min(lab.label) AS label
            FROM adj JOIN lab ON adj.dst = lab.rid
            GROUP BY adj.src
            """
        )
        changed = con.execute(
            "SELECT count(*) FROM lab2 JOIN lab USING (rid) WHERE lab2.label <> lab.label"
        ).fetchone()[0]
        con.execute("DROP TABLE lab; ALTER TABLE lab2 RENAME TO lab")
        if changed == 0:
            break
        if rounds >= args.max_iterations:
            log(f"error: label propagation did not settle in {rounds} rounds; "
                "raise --max-iterations")
            return 1
    t = step("connected components", t)

    # --- 7. crosswalk ------------------------------------------------------------------------
    out = args.out.replace("'", "''")
    con.execute(
        f"""
        COPY (
            SELECT r.source, r.source_id,
                   'C' || lpad(coalesce(l.label, r.rid)::VARCHAR, 9, '0') AS customer_key
            FROM recs r LEFT JOIN lab l USING (rid)
            ORDER BY r.rid
        ) TO '{out}' (HEADER, DELIMITER ',')
        """
    )
    n_keys = con.execute(
        "SELECT count(DISTINCT coalesce(l.label, r.rid)) FROM recs r LEFT JOIN lab l USING (rid)"
    ).fetchone()[0]
    t = step("write crosswalk", t)

    log(f"duckdb {duckdb.__version__}, threads {args.threads}")
    log(f"records {n_recs}, matched pairs {n_edges}, customers {n_keys}, "
        f"label-propagation rounds {rounds}")
    for name, secs in timings:
        log(f"  {name:<24} {secs:9.3f} s")
    log(f"  {'total':<24} {time.perf_counter() - t_all:9.3f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
