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
for jobs in 1 2; do
    best=""
    for k in 1 2 3; do
        read -r s kb < <(run "$jobs" 1000)
        if [ -z "$best" ] || [ "$(echo "$s < $best" | bc)" = 1 ]; then best=$s; bkb=$kb; fi
    done
    rate=$(echo "scale=0; 1000 / $best" | bc)
    echo "jobs $jobs: best of 3: $best s for 1000 files = $rate files/s, peak RSS $bkb KB"
    eval "t$jobs=$best"
done
echo "speed-up with 2 jobs: $(echo "scale=2; $t1 / $t2" | bc)x (goal >= 1.8x; goal >= 400 files/s with 2 jobs)"
run 2 4000 >/dev/null
read -r s4 kb4 < <(run 2 4000)
read -r s1 kb1 < <(run 2 1000)
echo "peak RSS, 2 jobs: 1000 files $kb1 KB, 4000 files $kb4 KB (should stay flat)"
