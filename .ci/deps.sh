#!/usr/bin/env bash
# deps.sh - install the Debian packages tidelock needs, only those missing.
# Uses sudo when not root. --no-install-recommends keeps the install small.
set -euo pipefail
pkgs=(gcc make pkg-config libfftw3-dev libcmocka-dev libjansson-dev libinih-dev liblz4-dev python3-numpy
      # plots of the report (host/plot.c): cairo for PNG and SVG, fontconfig to release its font cache
      libcairo2-dev libfontconfig-dev
      # cross-target builds (hil/targets.mk): Cortex-M7 bare metal under QEMU, big-endian PowerPC under qemu-ppc
      gcc-arm-none-eabi libnewlib-arm-none-eabi qemu-system-arm gcc-powerpc-linux-gnu libc6-dev-powerpc-cross
      qemu-user
      # fuzzing and analysis gates (tests/fuzz/fuzz.mk): clang with libFuzzer and the sanitizer
      # runtimes (libclang-rt-14-dev is only a recommendation of clang), valgrind, cppcheck, gcovr
      clang libclang-rt-14-dev valgrind cppcheck gcovr clang-tidy
      # sweeps and sharded replays: tests/test_sweep.c runs 4 shards through GNU parallel (and fails without it)
      parallel)
missing=()
for p in "${pkgs[@]}"; do
    dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -eq 0 ]; then
    echo "deps: all Debian packages present (${pkgs[*]})"
    exit 0
fi
sudo=""
if [ "$(id -u)" -ne 0 ]; then
    command -v sudo >/dev/null || { echo "deps: need root or sudo to install: ${missing[*]}" >&2; exit 1; }
    sudo="sudo"
fi
echo "deps: installing ${missing[*]}"
$sudo apt-get update -q
DEBIAN_FRONTEND=noninteractive $sudo apt-get install -y --no-install-recommends "${missing[@]}"
