#!/usr/bin/env bash
# Benchmark of `tracephase trend`: a 10-minute, 10 kS/s, 2-channel capture (6 million rows,
# 12 million samples) cut into 10-cycle windows, timed from process start to exit, with peak
# memory. Goal (issue 14): under 2 s. Then `report` of the same capture with `--plot-dir`: its
# time and memory, and the size of the page and of the trend plot (one point per window: 3 000).
#
# Usage: benches/trend.sh [RUNS]        (run by hand from any directory; not run by CI)
# Environment: ROWS (default 6000000), RATE_HZ (default 10000).
set -euo pipefail

cd "$(dirname "$0")/.."
RUNS=${1:-5}
ROWS=${ROWS:-6000000}
RATE_HZ=${RATE_HZ:-10000}
DATA_DIR=target/bench-data
FILE=$DATA_DIR/bench-${ROWS}-${RATE_HZ}-fixed.csv

echo "== build"
cargo build --release --quiet --bin tracephase --example make-bench-csv
BIN=target/release/tracephase

mkdir -p "$DATA_DIR"
if [ ! -s "$FILE" ]; then
    echo "== generating $FILE"
    target/release/examples/make-bench-csv "$FILE.part" "$ROWS" "$RATE_HZ" fixed
    mv "$FILE.part" "$FILE"
fi
echo "file: $FILE, $(stat -c %s "$FILE") bytes, $ROWS rows"

measure() {
    python3 - "$@" <<'PY'
import os, statistics, subprocess, sys, time
runs, cmd = int(sys.argv[1]), sys.argv[2:]
walls, cpus, rss = [], [], []
for k in range(runs + 1):
    t0 = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=subprocess.DEVNULL)
    _, status, usage = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
    if os.waitstatus_to_exitcode(status) != 0:
        sys.exit(f"command failed: {' '.join(cmd)}")
    if k:
        walls.append(wall)
        cpus.append(usage.ru_utime + usage.ru_stime)
        rss.append(usage.ru_maxrss)
print(f"wall: median {statistics.median(walls):.3f} s, min {min(walls):.3f} s; "
      f"cpu: median {statistics.median(cpus):.3f} s; peak RSS {max(rss) / 1024:.0f} MiB")
PY
}

for args in "--format json" "--format json --aggregate 3s"; do
    echo
    echo "== tracephase trend $args ($RUNS runs, the first not counted; goal < 2 s)"
    # shellcheck disable=SC2086
    measure "$RUNS" "$BIN" trend "$FILE" $args
done

echo
echo "== tracephase report with --plot-dir (2 runs, the first not counted)"
REPORT=$DATA_DIR/trend-report.html
PLOTS=$DATA_DIR/trend-plots
rm -rf "$PLOTS"
measure 1 "$BIN" report "$FILE" -o "$REPORT" --plot-dir "$PLOTS"
TREND_SVG=$(find "$PLOTS" -name '*-trend.svg')
echo "report: $(stat -c %s "$REPORT") bytes; trend plot: $(stat -c %s "$TREND_SVG") bytes ($TREND_SVG)"
echo
echo "load average while measured: $(cut -d' ' -f1-3 /proc/loadavg) (2 cores shared with other builds)"
