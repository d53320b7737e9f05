#!/usr/bin/env bash
# End-to-end benchmark of `tracephase analyze` on a COMTRADE record: a generated IEEE C37.111
# BINARY record of 1 million samples and 8 analog channels (VA VB VC IA IB IC IN and a spare),
# timed from process start to exit (goal: under 0.5 s), with its peak memory.
#
# Usage: benches/comtrade.sh [RUNS]          (run by hand from any directory; not run by CI)
# Needs: cargo, python3. Environment: SAMPLES (default 1000000), RATE_HZ (default 10000),
# FORM=cff to time the same record as a 2013 single file (.cff: the .cfg and the .dat's bytes
# as its CFG and DAT BINARY sections).
set -euo pipefail

cd "$(dirname "$0")/.."
RUNS=${1:-10}
SAMPLES=${SAMPLES:-1000000}
RATE_HZ=${RATE_HZ:-10000}
DATA_DIR=target/bench-data
FILE=$DATA_DIR/bench-record-${SAMPLES}-${RATE_HZ}.cfg

echo "== build"
cargo build --release --quiet --bin tracephase --example make-bench-record
BIN=target/release/tracephase

mkdir -p "$DATA_DIR"
if [ ! -s "${FILE%.cfg}.dat" ]; then
    echo "== generating $FILE"
    target/release/examples/make-bench-record "$FILE" "$SAMPLES" "$RATE_HZ"
fi
BYTES=$(($(stat -c %s "$FILE") + $(stat -c %s "${FILE%.cfg}.dat")))
echo "record: $FILE + .dat, $BYTES bytes, $SAMPLES samples"
if [ "${FORM:-pair}" = cff ]; then
    CFF=${FILE%.cfg}.cff
    DAT=${FILE%.cfg}.dat
    {
        printf -- '--- file type: CFG ---\r\n'
        cat "$FILE"
        printf -- '--- file type: DAT BINARY: %d ---\r\n' "$(stat -c %s "$DAT")"
        cat "$DAT"
    } > "$CFF"
    FILE=$CFF
    BYTES=$(stat -c %s "$FILE")
    echo "as a single file: $FILE, $BYTES bytes"
fi

echo
echo "== tracephase analyze ($RUNS runs after one warm-up)"
OUT=$("$BIN" analyze "$FILE" --format json)
echo "${OUT:0:300} ..."
python3 - "$RUNS" "$BYTES" "$BIN" analyze "$FILE" --format json <<'PY'
import os, statistics, subprocess, sys, time
runs, size, cmd = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3:]
walls, rss = [], []
for k in range(runs + 1):  # the first run warms the page cache and is not counted
    t0 = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=subprocess.DEVNULL)
    _, status, usage = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
    if os.waitstatus_to_exitcode(status) != 0:
        sys.exit(f"command failed: {' '.join(cmd)}")
    if k:
        walls.append(wall)
        rss.append(usage.ru_maxrss)
med, best = statistics.median(walls), min(walls)
print(f"\n== summary ({os.cpu_count()} cores, load average {os.getloadavg()[0]:.2f})")
print(f"tracephase: median {med*1e3:.0f} ms (best {best*1e3:.0f} ms, worst {max(walls)*1e3:.0f} ms) "
      f"= {size/med/1e6:.0f} MB/s; peak RSS {max(rss)} KB")
print(f"  goal < 0.5 s ............... {'ok' if med < 0.5 else 'NOT MET'}")
PY
