#!/usr/bin/env bash
# The batch job of the README ("Periodic refresh"), end to end on the demo data:
# a first refresh, a nightly batch with changes, a second refresh, the export, and the
# SQL that counts customers and revenue through the crosswalk.
# Run from the repository root: bash examples/refresh/walkthrough.sh
set -euo pipefail
cd "$(dirname "$0")/../.."
SAMEKEY=${SAMEKEY:-target/release/samekey}
[ -x "$SAMEKEY" ] || cargo build --release --quiet
WORK=${WORK:-$(mktemp -d)}
cp demo-data/spec.toml demo-data/*_*.csv "$WORK/"
echo "== first refresh (fits a model, creates $WORK/samekey-store.db)"
"$SAMEKEY" refresh --spec "$WORK/spec.toml"

echo "== the nightly batch: a CRM customer opens a web shop account; a ticket is deleted"
echo '199999,"King, Anne-Marie",aking@hotmail.com,1-760-555-5287,5798 Larch Circle,66936,Fernford,US,20.10.1972,2026-12-01 09:00:00' \
    >> "$WORK/webshop_accounts.csv"
sed -i '$d' "$WORK/support_tickets.csv"
"$SAMEKEY" refresh --spec "$WORK/spec.toml"

echo "== publish"
"$SAMEKEY" export --store "$WORK/samekey-store.db" --out "$WORK/published" --events-since 1
head -3 "$WORK/published/crosswalk.csv"

echo "== customers and revenue through the crosswalk"
sqlite3 -bail -cmd "ATTACH '$WORK/samekey-store.db' AS store" "$WORK/sales.db" \
    < examples/refresh/customers.sql
