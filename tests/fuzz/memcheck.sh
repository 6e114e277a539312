#!/usr/bin/env bash
# memcheck.sh TIDELOCK OUT - valgrind memcheck on one end-to-end run:
# `tidelock run tests/fuzz/memcheck.ini`, then `tidelock decode` of its
# frames.bin and (--raw) of its packets.bin. Any invalid read or write, use
# of an uninitialised value, bad free, or leaked block (definite, indirect
# or possible) makes valgrind exit 99 and fails the gate, naming the step;
# so does a tool exit status other than 0 (the scenario must PASS and the
# decodes must be clean).
set -u
T=$1; O=$2
rm -rf "$O"; mkdir -p "$O"
VG=(valgrind -q --error-exitcode=99 --leak-check=full --show-leak-kinds=definite,indirect,possible
    --errors-for-leak-kinds=definite,indirect,possible --track-origins=yes)
fail=0
step() {
    local name=$1; shift
    local t0=$SECONDS
    "${VG[@]}" --log-file="$O/$name.valgrind" "$T" "$@" >"$O/$name.out" 2>&1
    local rc=$?
    if [ "$rc" -eq 99 ]; then
        echo "memcheck $name: FAILED: valgrind reported errors ($O/$name.valgrind):"; head -20 "$O/$name.valgrind"; fail=1
    elif [ "$rc" -ne 0 ]; then
        echo "memcheck $name: FAILED: tidelock exited $rc ($O/$name.out)"; tail -5 "$O/$name.out"; fail=1
    elif [ -s "$O/$name.valgrind" ]; then
        echo "memcheck $name: FAILED: valgrind wrote a report ($O/$name.valgrind)"; head -20 "$O/$name.valgrind"; fail=1
    else
        echo "memcheck $name: clean ($((SECONDS - t0)) s under valgrind: tidelock $*)"
    fi
}
step run run tests/fuzz/memcheck.ini -o "$O/run"
step decode decode "$O/run/frames.bin" tests/fuzz/memcheck.ini -o "$O/decoded"
step decode-raw decode "$O/run/packets.bin" tests/fuzz/memcheck.ini --raw -o "$O/decoded-raw"
[ $fail -eq 0 ] || { echo "memcheck FAILED"; exit 1; }
echo "memcheck: 3 commands clean under valgrind (no error, no leak)"
