#!/usr/bin/env bash
# run_fuzz.sh FUZZ_BUILD SECONDS TARGET... - run each libFuzzer target
# FUZZ_BUILD/fuzz_TARGET for SECONDS, seeded from FUZZ_BUILD/seeds/TARGET
# (tests/fuzz/make_seeds.py), growing FUZZ_BUILD/corpus/TARGET.
#
# Prints one line per target: executions per second, total executions,
# corpus size, peak RSS. A crash, leak, timeout (an input running over 10 s),
# out-of-memory (over 2048 MB) or sanitizer report fails the target: its
# name, the first error line, the reproducer file and the log are printed
# and the script exits 1 after running the rest. The inputs in
# tests/fuzz/regress/TARGET/ (each once made a target fail) run first.
set -u
B=$1; S=$2; shift 2
declare -A MAXLEN=([ground]=32768 [link]=65536 [sigmf]=16384 [scenario]=8192 [taps]=20000)
mkdir -p "$B/logs" "$B/artifacts"
: > "$B/fuzz-stats.txt"
failed=()
for t in "$@"; do
    mkdir -p "$B/corpus/$t"
    log="$B/logs/$t.log"
    # first the inputs that once failed (tests/fuzz/regress/TARGET), once each
    reg=(tests/fuzz/regress/"$t"/*)
    if [ -e "${reg[0]}" ]; then
        if ! UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 "$B/fuzz_$t" "${reg[@]}" >"$B/logs/$t-regress.log" 2>&1; then
            echo "fuzz $t: FAILED on a regression input (log $B/logs/$t-regress.log)"
            failed+=("$t")
            continue
        fi
    fi
    UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
    "$B/fuzz_$t" -max_total_time="$S" -timeout=10 -rss_limit_mb=2048 -max_len="${MAXLEN[$t]:-65536}" \
        -print_final_stats=1 -artifact_prefix="$B/artifacts/$t-" "$B/corpus/$t" "$B/seeds/$t" >"$log" 2>&1
    rc=$?
    execs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log")
    rate=$(sed -n 's/^stat::average_exec_per_sec: *//p' "$log")
    rss=$(sed -n 's/^stat::peak_rss_mb: *//p' "$log")
    corpus=$(ls "$B/corpus/$t" | wc -l)
    if [ "$rc" -ne 0 ] || grep -qE '^==[0-9]+==ERROR|runtime error:|^SUMMARY: (Address|Undefined|Leak)Sanitizer|ERROR: libFuzzer' "$log"; then
        first=$(grep -m1 -E '==ERROR|runtime error:|ERROR: libFuzzer|deadly signal|ALARM' "$log")
        art=$(sed -n 's/.*Test unit written to \(.*\)$/\1/p' "$log" | tail -1)
        echo "fuzz $t: FAILED (exit $rc): ${first:-see the log}; reproducer ${art:-none}; log $log"
        failed+=("$t")
        continue
    fi
    if [ -z "$execs" ] || [ "$execs" -eq 0 ]; then
        echo "fuzz $t: FAILED: no executions reported (log $log)"
        failed+=("$t")
        continue
    fi
    line=$(printf 'fuzz %-8s %8s exec/s, %10s executions in %s s, corpus %s inputs, peak RSS %s MB' \
           "$t:" "$rate" "$execs" "$S" "$corpus" "$rss")
    echo "$line"
    echo "$line" >> "$B/fuzz-stats.txt"
done
if [ ${#failed[@]} -ne 0 ]; then
    echo "fuzz FAILED: ${failed[*]}"
    exit 1
fi
echo "fuzz: $# targets, $S s each, no crash, leak, timeout or sanitizer report"
