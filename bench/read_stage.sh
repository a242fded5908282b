#!/usr/bin/env bash
# Time the "read + standardize" stage of `samekey link` for several binaries, side by
# side: the binaries run alternately, ROUNDS times each, on the same spec, so that the
# load of a shared machine hits them alike.
#
# usage: bench/read_stage.sh SPEC ROUNDS BINARY...
# e.g.   bench/read_stage.sh /tmp/p1m/spec.toml 3 /tmp/samekey-old target/release/samekey
#
# The spec's [[block]] sections are replaced by one block on BLOCK_KEY (default
# `email`) so that the later stages stay short; the copy is written next to the spec
# (source paths are relative to it) and removed afterwards. Set FULL=1 to run the spec
# as it is. RAYON_NUM_THREADS is passed through (1 gives the stage's CPU time).
# Prints one line per run: binary, read + standardize seconds (wall), total seconds
# (wall), CPU seconds of the whole run (user + system; less sensitive to other load than
# wall time), peak RSS.
set -euo pipefail
if [ $# -lt 3 ]; then
    echo "usage: $0 SPEC ROUNDS BINARY..." >&2
    exit 2
fi
spec=$1
rounds=$2
shift 2
out=$(mktemp -d)
cleanup() { rm -rf "$out"; }
trap cleanup EXIT
if [ "${FULL:-0}" != 1 ]; then
    cheap="$(dirname "$spec")/.read_stage_$$.toml"
    awk -v key="${BLOCK_KEY:-email}" '
        /^\[\[block\]\]/ { skip = 1; next }
        /^\[/ { skip = 0 }
        !skip { print }
        END { printf "\n[[block]]\nname = \"read_stage\"\nkeys = [\"%s\"]\n", key }
    ' "$spec" >"$cheap"
    cleanup() { rm -rf "$out" "$cheap"; }
    spec=$cheap
fi
for round in $(seq "$rounds"); do
    for bin in "$@"; do
        log="$out/log"
        if ! /usr/bin/time -f "%M %U %S" -o "$out/rss" "$bin" link --spec "$spec" --out "$out/run" \
            --timings >"$log" 2>"$out/err"; then
            echo "$bin failed:" >&2
            cat "$out/err" >&2
            exit 1
        fi
        read_s=$(awk '/read \+ standardize/ {print $(NF-1)}' "$log")
        total_s=$(awk '$1 == "total" {print $(NF-1)}' "$log")
        read -r rss user sys < <(tail -n1 "$out/rss")
        printf '%-28s round %d  read+std %7s s  total %7s s  cpu %7.2f s  rss %6d MB\n' \
            "$bin" "$round" "$read_s" "$total_s" "$(echo "$user + $sys" | bc)" $((rss / 1024))
    done
done
