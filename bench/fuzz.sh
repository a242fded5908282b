#!/usr/bin/env bash
# Runs each fuzz target of tests/fuzz.rs on its own for SAMEKEY_FUZZ_SECONDS seconds
# (default 600), one after the other at the lowest CPU priority, and prints each target's
# line: inputs run, seconds, peak memory, and "no panic" (or the failure). `cargo test`
# runs the same targets for 2 s each as a smoke test.
#
#   bash bench/fuzz.sh [TARGET...]    (targets: names email phone address dates
#                                      csv_reading spec_loading model_loading)
set -uo pipefail
cd "$(dirname "$0")/.."
secs=${SAMEKEY_FUZZ_SECONDS:-600}
targets=("$@")
[[ ${#targets[@]} -gt 0 ]] || targets=(names email phone address dates csv_reading spec_loading model_loading)
# shellcheck source=bench/lib/test_binary.sh
source bench/lib/test_binary.sh
bin=$(test_binary)
[[ -x "$bin" ]] || { echo "test binary not found; run cargo test --no-run" >&2; exit 1; }
logs=target/fuzz-logs
mkdir -p "$logs"
# A copy, so that a rebuild during the run does not swap the binary under it.
cp "$bin" "$logs/tests-bin"
bin=$logs/tests-bin
echo "fuzz: $secs s per target, $(uname -m), $(nproc) cores, $(date -u +%Y-%m-%dT%H:%MZ)"
failed=0
for t in "${targets[@]}"; do
    log="$logs/$t.log"
    # The harness aborts on a hang itself; the outer limit is a last resort.
    if SAMEKEY_FUZZ_SECONDS=$secs timeout $((secs + 600)) nice -n 19 \
        "$bin" "fuzz::fuzz_$t" --exact --nocapture --test-threads=1 >"$log" 2>&1; then
        grep -ho 'fuzz [a-z_]*: [0-9]* inputs.*' "$log"
    else
        failed=1
        echo "fuzz $t: FAILED (see $log)"
        grep -h -m3 'fuzz \|panicked' "$log"
    fi
done
exit $failed
