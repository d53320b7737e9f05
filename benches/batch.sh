#!/usr/bin/env bash
# Batch benchmark: files per second with --jobs 1 and --jobs 2 on 1 000 captures of 20 000
# samples, and peak memory for 1 000 against 4 000 captures (it should stay flat).
# Usage: benches/batch.sh [FORMAT]   (wav or csv; run by hand, not by CI)
set -euo pipefail
cd "$(dirname "$0")/.."
FORMAT=${1:-wav}
DATA=target/bench-data/batch-$FORMAT
cargo build --release --quiet --bin tracephase --example make-batch-set
BIN=target/release/tracephase
for n in 1000 4000; do
    if [ ! -d "$DATA-$n" ]; then
        echo "== generating $n captures ($FORMAT) in $DATA-$n"
        target/release/examples/make-batch-set "$DATA-$n" "$n" 20000 "$FORMAT"
    fi
done
run() { # jobs count -> "seconds peak_kb"
    /usr/bin/time -f "%e %M" "$BIN" batch --jobs "$1" --out target/bench-data/batch-summary.csv \
        "$DATA-$2" 2>&1 >/dev/null | tail -n 1
}
echo "== warm the page cache"
run 2 1000 >/dev/null
# This machine's speed drifts from minute to minute, so the two settings are run in turns (five
# pairs) and both the best times and the median of the pairs' ratios are given.
t1=""; t2=""; ratios=()
for k in 1 2 3 4 5; do
    read -r s1 kb1 < <(run 1 1000)
    read -r s2 kb2 < <(run 2 1000)
    echo "pair $k: jobs 1 $s1 s, jobs 2 $s2 s"
    ratios+=("$(echo "scale=3; $s1 / $s2" | bc)")
    if [ -z "$t1" ] || [ "$(echo "$s1 < $t1" | bc)" = 1 ]; then t1=$s1; m1=$kb1; fi
    if [ -z "$t2" ] || [ "$(echo "$s2 < $t2" | bc)" = 1 ]; then t2=$s2; m2=$kb2; fi
done
echo "jobs 1: best of 5: $t1 s for 1000 files = $(echo "scale=0; 1000 / $t1" | bc) files/s, peak RSS $m1 KB"
echo "jobs 2: best of 5: $t2 s for 1000 files = $(echo "scale=0; 1000 / $t2" | bc) files/s, peak RSS $m2 KB"
median=$(printf '%s\n' "${ratios[@]}" | sort -n | sed -n 3p)
echo "speed-up with 2 jobs: best/best $(echo "scale=2; $t1 / $t2" | bc)x, median of pairs ${median}x" \
    "(goal >= 1.8x; goal >= 400 files/s with 2 jobs)"
run 2 4000 >/dev/null
read -r s4 kb4 < <(run 2 4000)
read -r s1 kb1 < <(run 2 1000)
echo "peak RSS, 2 jobs: 1000 files $kb1 KB, 4000 files $kb4 KB (should stay flat)"
