#!/usr/bin/env bash
# Instructions per step of each scheme at n = 512 (KdV soliton), counted by valgrind's callgrind:
# the example step_count runs 1000 and 2000 steps, and the difference of the two totals / 1000 is
# one step (the setup cancels). Counts are stable across runs; timings on a shared machine are not.
# Usage (from anywhere): bash rust/core/examples/step_count.sh [--baseline] [scheme ...]
# --baseline counts the portable copies of the arithmetic kernels (what a CPU without AVX2 runs).
set -euo pipefail
cd "$(dirname "$0")/../../.."
command -v valgrind >/dev/null || { echo "valgrind is needed (package valgrind)"; exit 1; }
cargo build --release --quiet --example step_count
bin=target/release/examples/step_count
flags=()
if [ "${1:-}" = --baseline ]; then flags=(--baseline); shift; fi
schemes=("$@")
[ ${#schemes[@]} -gt 0 ] || schemes=(etdrk4 ifrk4 strang adaptive)

count() { # total instructions of one run
    valgrind --tool=callgrind --callgrind-out-file=/dev/null "$bin" "$1" "$2" ${flags[@]+"${flags[@]}"} 2>&1 >/dev/null |
        awk '/Collected :/ {print $NF}'
}

for scheme in "${schemes[@]}"; do
    a=$(count "$scheme" 1000)
    b=$(count "$scheme" 2000)
    echo "$scheme: $(((b - a) / 1000)) instructions per step (n = 512${flags:+, baseline kernels})"
done
