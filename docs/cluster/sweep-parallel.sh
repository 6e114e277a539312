#!/usr/bin/env bash
# sweep-parallel.sh - a tidelock sweep on one or more machines with GNU parallel
# (Debian package `parallel`), then the merge. docs/cluster.md explains it.
#
#   docs/cluster/sweep-parallel.sh SHARDS OUT SCENARIO.ini --vary KEY=V,... [--vary ...]
#
# Runs `tidelock sweep ... --shard I/SHARDS` for I = 0 .. SHARDS-1, JOBS at a
# time (default: the number of cores), then `tidelock merge` into
# OUT/sweep.csv and OUT/sweep.json: the bytes one `tidelock sweep` writes.
# To spread the shards over machines that share OUT, add parallel's
# --sshloginfile (e.g. PARALLEL="--sshloginfile nodes.txt").
# Environment: TIDELOCK (default: tidelock on PATH), JOBS.
set -euo pipefail
if [ $# -lt 4 ]; then
    echo "usage: $0 SHARDS OUT SCENARIO.ini --vary KEY=V,... [--vary ...]" >&2
    exit 2
fi
shards=$1 out=$2
shift 2
command -v parallel >/dev/null || { echo "$0: GNU parallel is missing (Debian package 'parallel')" >&2; exit 1; }
tidelock=${TIDELOCK:-tidelock}
jobs=${JOBS:-0} # 0: parallel runs as many as there are cores
mkdir -p "$out"
seq 0 $((shards - 1)) |
    parallel --will-cite --halt now,fail=1 -j "$jobs" -q "$tidelock" sweep "$@" --out "$out" --shard "{}/$shards" -q
printf -v n '%04d' "$shards"
"$tidelock" merge "$out"/shard-*-of-"$n".tlshard --out "$out"
