#!/usr/bin/env bash
# run_suite.sh DIR TEST... - run cmocka test binaries, echo their output,
# and close with one line "tests (DIR): N passed, N failed".
# A binary that exits non-zero without reporting a failed test (a crash, a
# sanitizer report) counts as one failure.
set -u
dir=$1; shift
passed=0; failed=0
for t in "$@"; do
    out=$("$dir/$t" 2>&1); rc=$?
    printf '%s\n' "$out"
    p=$(grep -c '^\[       OK \]' <<<"$out")
    f=$(grep -E '^\[  FAILED  \] [A-Za-z_]' <<<"$out" | grep -v 'test(s)' | sort -u | grep -c .)
    if [ "$rc" -ne 0 ] && [ "$f" -eq 0 ]; then
        echo "$t: exited with status $rc without a cmocka failure (crash or sanitizer report)"
        f=1
    fi
    passed=$((passed + p)); failed=$((failed + f))
done
echo "tests ($dir): $passed passed, $failed failed"
[ -n "${TL_TALLY:-}" ] && echo "$passed $failed" >>"$TL_TALLY"
[ "$failed" -eq 0 ]
