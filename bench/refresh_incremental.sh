#!/usr/bin/env bash
# Incremental refresh against a full re-link, side by side in one run, on samekey's
# synthetic data with a share of the records changed.
#
# usage: bench/refresh_incremental.sh [CUSTOMERS] [SHARE]   (default 1000000 0.01)
#
# Steps: `samekey synth` (seed 7) into $WORK/data; a first refresh into $WORK/base.db
# (fits the model); about SHARE of the rows of every source file changed (seeded): half
# of them get another e-mail address, a quarter are deleted, a quarter are copied
# under a new id (a new record of the same customer); the store is copied twice; then
# `refresh` (incremental: only the pairs of new and changed records are compared) on one
# copy and `refresh --full` (every candidate pair, the same stored model) on the other,
# ROUNDS times alternately (default 1; a copy of the base store each time, so both
# start from the same run). Both results are exported and compared: the crosswalks and
# the key events must be equal. Prints wall seconds, CPU seconds and peak RSS of each
# run. Needs GNU time at /usr/bin/time and python3. Runs under `nice`.
set -euo pipefail
cd "$(dirname "$0")/.."
customers=${1:-1000000}
share=${2:-0.01}
rounds=${ROUNDS:-1}
bin=${SAMEKEY:-target/release/samekey}
work=${WORK:-target/bench-refresh}
[ -x "$bin" ] || { echo "build first: cargo build --release (or set SAMEKEY)" >&2; exit 2; }
mkdir -p "$work"
data="$work/data"
if [ ! -f "$data/spec.toml" ] || [ "${REUSE_DATA:-0}" != 1 ]; then
    rm -rf "$data" "$work/base.db"
    echo "== synth $customers customers" >&2
    nice "$bin" synth --customers "$customers" --seed 7 --quiet --out "$data"
fi
if [ ! -f "$work/base.db" ]; then
    echo "== first refresh (fits the model)" >&2
    /usr/bin/time -f "first refresh: %e s wall, %U+%S s CPU, %M KiB peak" \
        nice "$bin" --quiet refresh --spec "$data/spec.toml" --store "$work/base.db"
    echo "== change about $share of the rows" >&2
    python3 - "$data" "$share" <<'EOF'
import csv, random, sys, os
data, share = sys.argv[1], float(sys.argv[2])
rng = random.Random(7)
for name in sorted(os.listdir(data)):
    if not name.endswith(".csv") or name == "truth.csv":
        continue
    path = os.path.join(data, name)
    with open(path, newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    header, body = rows[0], rows[1:]
    email = next((i for i, h in enumerate(header) if "mail" in h), None)
    out, added, counts = [], [], [0, 0, 0]
    for i, row in enumerate(body):
        if rng.random() >= share:
            out.append(row)
            continue
        what = rng.random()
        if what < 0.5 and email is not None:
            row = list(row)
            row[email] = "changed.%d@example.org" % i
            counts[0] += 1
            out.append(row)
        elif what < 0.75:
            counts[1] += 1
        else:
            copy = list(row)
            copy[0] = copy[0] + "-N"
            added.append(copy)
            counts[2] += 1
            out.append(row)
    with open(path, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f)
        w.writerow(header)
        w.writerows(out + added)
    print("%s: %d rows, %d e-mails changed, %d deleted, %d added"
          % (name, len(body), counts[0], counts[1], counts[2]), file=sys.stderr)
EOF
fi
for round in $(seq 1 "$rounds"); do
    for mode in incremental full; do
        store="$work/$mode.db"
        rm -f "$store" "$store-journal" "$store-wal"
        cp "$work/base.db" "$store"
        flag=()
        [ "$mode" = full ] && flag=(--full)
        /usr/bin/time -o "$work/$mode.time" -f "%e %U %S %M" \
            nice "$bin" refresh --timings --spec "$data/spec.toml" --store "$store" "${flag[@]}" \
            > "$work/$mode.out" 2> "$work/$mode.err"
        read -r wall user sys rss < "$work/$mode.time"
        linking=$(grep "linking:" "$work/$mode.out" | sed 's/^ *//')
        printf "round %s %-11s %7.1f s wall %7.1f s CPU %6d MiB peak  %s\n" \
            "$round" "$mode" "$wall" "$(echo "$user + $sys" | bc)" "$((rss / 1024))" "$linking"
        rm -rf "$work/export-$mode"
        nice "$bin" --quiet export --store "$store" --out "$work/export-$mode" --events-since 1
    done
    if cmp -s "$work/export-incremental/crosswalk.csv" "$work/export-full/crosswalk.csv" \
        && cmp -s "$work/export-incremental/key_events.csv" "$work/export-full/key_events.csv"; then
        echo "round $round: same crosswalk ($(($(wc -l < "$work/export-full/crosswalk.csv") - 1)) rows) and key events ($(($(wc -l < "$work/export-full/key_events.csv") - 1)))"
    else
        echo "round $round: the crosswalks or key events differ" >&2
        exit 1
    fi
done
grep -E "records |key events" "$work/incremental.out"
for mode in incremental full; do
    echo "stages, $mode (last round):"
    grep timing: "$work/$mode.err" | sed 's/timing:/ /'
done

