#!/usr/bin/env bash
# End-to-end benchmark: samekey against a plain-DuckDB baseline on invented data.
#
# For each size N it generates N customers with `samekey synth`, links them with
# `samekey link` (model fitting included) and with bench/duckdb_baseline.py, measures
# wall time and peak RSS of each with /usr/bin/time -v, scores both crosswalks with
# `samekey evaluate`, and prints a table that is also written as Markdown.
#
# Usage: bench/run.sh [--sizes 100000,1000000] [--seed 7] [--smoke]
#                     [--work DIR] [--results FILE] [--threads 2] [--reuse-data]
# See bench/README.md.
set -euo pipefail

ROOT="$(cd "$(dirname "$0")/.." && pwd)"
cd "$ROOT"

SIZES="100000,1000000"
SEED=7
WORK="target/bench"
RESULTS=""
THREADS=2
REUSE_DATA=0
SMOKE=0

usage() {
    sed -n '2,11p' "$0" | sed 's/^# \{0,1\}//'
    cat <<'EOF'

Options:
  --sizes N[,N...]  numbers of customers to generate (default 100000,1000000)
  --seed S          synth seed (default 7)
  --smoke           quick check of the whole flow: --sizes 2000, results under --work
  --work DIR        generated data, outputs and logs (default target/bench)
  --results FILE    Markdown results (default bench/results-YYYY-MM-DD.md;
                    with --smoke, DIR/results-smoke.md)
  --threads T       threads for DuckDB (default 2; samekey uses all cores)
  --reuse-data      skip `samekey synth` when DIR/data-N-sS already has truth.csv
EOF
}

die() {
    echo "bench: error: $*" >&2
    exit 1
}

while [[ $# -gt 0 ]]; do
    case "$1" in
        --sizes) SIZES="${2:?--sizes needs a value, e.g. --sizes 100000,1000000}"; shift 2 ;;
        --seed) SEED="${2:?--seed needs a value, e.g. --seed 7}"; shift 2 ;;
        --smoke) SMOKE=1; SIZES=2000; shift ;;
        --work) WORK="${2:?--work needs a folder}"; shift 2 ;;
        --results) RESULTS="${2:?--results needs a file name}"; shift 2 ;;
        --threads) THREADS="${2:?--threads needs a number}"; shift 2 ;;
        --reuse-data) REUSE_DATA=1; shift ;;
        -h|--help) usage; exit 0 ;;
        *) usage >&2; die "unknown argument \`$1\`" ;;
    esac
done

[[ "$SIZES" =~ ^[0-9]+(,[0-9]+)*$ ]] || die "--sizes \`$SIZES\`: write numbers separated by commas, e.g. 100000,1000000"
[[ "$SEED" =~ ^[0-9]+$ ]] || die "--seed \`$SEED\`: give a non-negative integer"
[[ "$THREADS" =~ ^[1-9][0-9]*$ ]] || die "--threads \`$THREADS\`: give a positive integer"
if [[ -z "$RESULTS" ]]; then
    if [[ $SMOKE -eq 1 ]]; then
        RESULTS="$WORK/results-smoke.md"
    else
        RESULTS="bench/results-$(date +%Y-%m-%d).md"
    fi
fi
[[ -x /usr/bin/time ]] || die "/usr/bin/time is missing; install GNU time (apt-get install time)"
command -v python3 >/dev/null || die "python3 is missing"
mkdir -p "$WORK"
WORK="$(cd "$WORK" && pwd)"

# Run a step with stdout to OUT and stderr to OUT.err; on failure name it, show the end
# of its output and stop. With TIMEFILE other than "-", measure it with /usr/bin/time -v.
#   step NAME OUT TIMEFILE COMMAND...
step() {
    local name="$1" out="$2" timef="$3"
    shift 3
    echo "  $name" >&2
    local rc=0
    if [[ "$timef" == "-" ]]; then
        "$@" >"$out" 2>"$out.err" || rc=$?
    else
        # Other work on the machine slows a measured step: note the load before it.
        cut -d' ' -f1-3 /proc/loadavg >"$timef.load" 2>/dev/null || true
        /usr/bin/time -v -o "$timef" "$@" >"$out" 2>"$out.err" || rc=$?
    fi
    if [[ $rc -ne 0 ]]; then
        echo "bench: error: step \`$name\` failed (exit $rc): $*" >&2
        echo "bench: last lines of $out.err:" >&2
        tail -n 20 "$out.err" >&2
        echo "bench: last lines of $out:" >&2
        tail -n 20 "$out" >&2
        exit 1
    fi
}

echo "== build (cargo build --release)" >&2
cargo build --release --quiet || die "cargo build --release failed (see the compiler output above)"
BIN="$ROOT/target/release/samekey"
[[ -x "$BIN" ]] || die "$BIN was not built"

echo "== python environment for DuckDB ($WORK/venv)" >&2
VENV="$WORK/venv"
PY="$VENV/bin/python"
WANT_DUCKDB="$(sed -n 's/^duckdb==\([^ ]*\).*/\1/p' bench/requirements.txt)"
[[ -n "$WANT_DUCKDB" ]] || die "bench/requirements.txt has no pinned duckdb==VERSION line"
if ! "$PY" -c "import duckdb, sys; sys.exit(duckdb.__version__ != '$WANT_DUCKDB')" 2>/dev/null; then
    python3 -m venv "$VENV" || die "python3 -m venv $VENV failed (Debian: apt-get install python3-venv)"
    "$PY" -m pip install --quiet --disable-pip-version-check -r bench/requirements.txt \
        || die "pip could not install bench/requirements.txt into $VENV"
fi
"$PY" -c "import duckdb" || die "duckdb does not import in $VENV"

IFS=',' read -r -a SIZE_LIST <<<"$SIZES"
for N in "${SIZE_LIST[@]}"; do
    DATA="$WORK/data-$N-s$SEED"
    RUN="$WORK/run-$N-s$SEED"
    echo "== N = $N customers, seed $SEED" >&2
    rm -rf "$RUN"
    mkdir -p "$RUN"
    if [[ $REUSE_DATA -eq 1 && -f "$DATA/truth.csv" && -f "$DATA/spec.toml" ]]; then
        echo "  synth: reusing $DATA" >&2
    else
        rm -rf "$DATA"
        step "synth" "$RUN/synth.log" "$RUN/synth.time" \
            "$BIN" synth --customers "$N" --seed "$SEED" --out "$DATA"
    fi
    for f in crm_contacts.csv webshop_accounts.csv support_tickets.csv truth.csv spec.toml; do
        [[ -f "$DATA/$f" ]] || die "samekey synth did not write $DATA/$f"
    done

    # samekey end to end, fitting included. No --quiet: it would also hide --timings.
    step "samekey link" "$RUN/samekey.log" "$RUN/samekey.time" \
        "$BIN" link --spec "$DATA/spec.toml" --out "$RUN/samekey" --pairs linked --timings
    step "samekey evaluate (samekey crosswalk)" "$RUN/samekey.eval.json" - \
        "$BIN" evaluate --truth "$DATA/truth.csv" --crosswalk "$RUN/samekey/crosswalk.csv" --json

    mkdir -p "$RUN/duckdb"
    step "duckdb baseline" "$RUN/duckdb.log" "$RUN/duckdb.time" \
        "$PY" bench/duckdb_baseline.py --data "$DATA" --out "$RUN/duckdb/crosswalk.csv" \
        --threads "$THREADS"
    step "samekey evaluate (duckdb crosswalk)" "$RUN/duckdb.eval.json" - \
        "$BIN" evaluate --truth "$DATA/truth.csv" --crosswalk "$RUN/duckdb/crosswalk.csv" --json
done

echo "== results" >&2
mkdir -p "$(dirname "$RESULTS")"
"$PY" bench/report.py --work "$WORK" --sizes "$SIZES" --seed "$SEED" --threads "$THREADS" \
    --out "$RESULTS" || die "bench/report.py could not summarize the runs in $WORK"
echo "written: $RESULTS" >&2
