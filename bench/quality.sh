#!/usr/bin/env bash
# Model quality without labels, side by side in one run:
#  1. unsupervised fit vs the "oracle" fit from true labels on synth data (default 100,000
#     customers), with the model's own precision estimate next to the actual precision;
#  2. guarded clustering vs plain transitive closure on hard synth data (many households,
#     twins and namesakes).
# Usage: bench/quality.sh [--customers N] [--hard-customers N] [--seed S]
set -euo pipefail
cd "$(dirname "$0")/.."
N=100000; HARD=20000; SEED=7
while [ $# -gt 0 ]; do
  case "$1" in
    --customers) N="$2"; shift 2 ;;
    --hard-customers) HARD="$2"; shift 2 ;;
    --seed) SEED="$2"; shift 2 ;;
    *) echo "unknown option $1 (use --customers N, --hard-customers N, --seed S)" >&2; exit 2 ;;
  esac
done
cargo build --release --quiet
K=target/release/samekey
W=target/bench/quality
rm -rf "$W"; mkdir -p "$W"

scores() { grep -E "^(pairwise|B-cubed)|precision   " "$1" | sed 's/^/    /'; }

echo "== 1. unsupervised vs oracle fit ($N customers, seed $SEED)"
$K --quiet synth --customers "$N" --seed "$SEED" --out "$W/data"
$K link --spec "$W/data/spec.toml" --out "$W/unsup" --pairs linked --truth "$W/data/truth.csv" > "$W/unsup.txt"
$K --quiet train --spec "$W/data/spec.toml" --oracle-truth "$W/data/truth.csv" --out "$W/oracle-model"
$K link --spec "$W/data/spec.toml" --model "$W/oracle-model/model.toml" --out "$W/oracle" --pairs linked --truth "$W/data/truth.csv" > "$W/oracle.txt"
echo "  unsupervised (EM, no labels):"; scores "$W/unsup.txt"
echo "  oracle (fitted from true labels):"; scores "$W/oracle.txt"

echo "== 2. guarded clustering vs plain transitive closure (hard data, $HARD customers)"
$K --quiet synth --customers "$HARD" --seed "$SEED" --hard --out "$W/hard"
# The synth spec has its own [cluster] section: drop it for the plain run.
awk '/^\[cluster\]/ { skip = 1; next } /^\[/ { skip = 0 } !skip { print }' \
    "$W/hard/spec.toml" > "$W/hard/plain.toml"
{ cat "$W/hard/plain.toml"; printf '\n[cluster]\nunique = ["birth_date"]\nmax_size = 12\n'; } > "$W/hard/guarded.toml"
$K link --spec "$W/hard/plain.toml" --out "$W/plain" --truth "$W/hard/truth.csv" > "$W/plain.txt"
$K link --spec "$W/hard/guarded.toml" --out "$W/guarded" --truth "$W/hard/truth.csv" > "$W/guarded.txt"
echo "  plain transitive closure:"; scores "$W/plain.txt"
echo "  guarded (unique birth_date, max_size 12):"; scores "$W/guarded.txt"
grep -E "refused" "$W/guarded.txt" | sed 's/^/    /' || true
