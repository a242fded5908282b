#!/usr/bin/env bash
# Runs the kill and concurrency tests of tests/durable.rs ROUNDS times each (default 20),
# each time in a fresh test process with its own seed for the kill times, at the lowest
# CPU priority, and prints the passes per test. Each round of the timed-kill test kills
# SAMEKEY_KILL_ROUNDS * 2 runs at random instants (default 3 * 2), each round of the
# concurrency test starts SAMEKEY_KILL_ROUNDS pairs of runs into one folder; the
# point-kill test aborts runs at 7 named points (read, scoring, before commit, before the
# rename, before and after the switch, between the links).
#
#   bash bench/kill_rounds.sh [ROUNDS]
set -uo pipefail
cd "$(dirname "$0")/.."
rounds=${1:-20}
tests=(
    a_run_killed_at_each_point_leaves_the_previous_run
    runs_killed_at_random_instants_never_leave_a_mixed_folder
    a_second_writer_is_refused_and_the_folder_holds_one_run
    a_killed_synth_leaves_the_previous_data
)
# shellcheck source=bench/lib/test_binary.sh
source bench/lib/test_binary.sh
bin=$(test_binary)
[[ -x "$bin" ]] || { echo "test binary not found; run cargo test --no-run" >&2; exit 1; }
# The tests run target/debug/samekey: do not rebuild it while this runs.
logs=target/kill-logs
mkdir -p "$logs"
echo "kill rounds: $rounds per test, $(uname -m), $(nproc) cores, $(date -u +%Y-%m-%dT%H:%MZ)"
status=0
for t in "${tests[@]}"; do
    pass=0 killed=0 runs=0 refused=0 pairs=0
    started=$(date +%s)
    for r in $(seq 1 "$rounds"); do
        log="$logs/$t.$r.log"
        if SAMEKEY_KILL_SEED=$r nice -n 19 "$bin" "durable::$t" --exact --nocapture \
            --test-threads=1 >"$log" 2>&1; then
            pass=$((pass + 1))
        else
            status=1
            echo "  $t round $r FAILED (see $log)"
        fi
        if l=$(grep -o '[0-9]* of [0-9]* runs killed while running' "$log"); then
            set -- $l
            killed=$((killed + $1)) runs=$((runs + $3))
        fi
        if l=$(grep -o '[0-9]* of [0-9]* second writers refused' "$log"); then
            set -- $l
            refused=$((refused + $1)) pairs=$((pairs + $3))
        fi
    done
    extra=""
    [[ $runs -gt 0 ]] && extra=" ($killed of $runs runs killed while running)"
    [[ $pairs -gt 0 ]] && extra=" ($refused of $pairs concurrent pairs had a second writer refused)"
    echo "$t: $pass of $rounds rounds passed in $(( $(date +%s) - started )) s$extra"
done
exit $status
