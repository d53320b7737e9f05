#!/usr/bin/env bash
# End-to-end benchmark of `tracephase analyze`: speed (MB/s, process start to exit) and peak
# memory on a generated 2-million-row CSV, against two pandas + numpy peers: a fuller reference
# doing the same job (reference_pandas.py) and the lean peer an engineer would write instead
# (lean_pandas.py: read_csv and one FFT per channel), with both speed ratios printed in one run.
#
# Usage: benches/end_to_end.sh [RUNS]        (run by hand from any directory; not run by CI)
# Needs: cargo, python3 (with venv and pip; PyPI reachable the first time). Uses hyperfine for
# timing when it is installed, else a timing loop.
# Environment: ROWS (default 2000000), RATE_HZ (default 1000000), STYLE (fixed, sci, or
# three-phase: a 7-column time,Va,Vb,Vc,Ia,Ib,Ic file, e.g. ROWS=1000000 RATE_HZ=10000, without
# the pandas reference), SKIP_PANDAS=1 to leave out the reference script.
set -euo pipefail

cd "$(dirname "$0")/.."
RUNS=${1:-10}
ROWS=${ROWS:-2000000}
RATE_HZ=${RATE_HZ:-1000000}
STYLE=${STYLE:-fixed}
DATA_DIR=target/bench-data
FILE=$DATA_DIR/bench-${ROWS}-${RATE_HZ}-${STYLE}.csv
VENV=target/bench-venv
# Peak-memory limit: 2.5 x the f64 size of the channels (two, or six for three phases).
CHANNELS=2
if [ "$STYLE" = three-phase ]; then
    CHANNELS=6
    SKIP_PANDAS=1
fi
LIMIT_BYTES=$((ROWS * CHANNELS * 8 * 5 / 2))

echo "== build"
cargo build --release --quiet --bin tracephase --example make-bench-csv
BIN=target/release/tracephase

mkdir -p "$DATA_DIR"
if [ ! -s "$FILE" ]; then
    echo "== generating $FILE"
    target/release/examples/make-bench-csv "$FILE.part" "$ROWS" "$RATE_HZ" "$STYLE"
    mv "$FILE.part" "$FILE"
fi
BYTES=$(stat -c %s "$FILE")
echo "file: $FILE, $BYTES bytes, $ROWS rows"
head -n 3 "$FILE" | sed 's/^/  /'

# measure NAME RUNS CMD...: prints "median_s min_s max_rss_kb" (wall time from fork to exit,
# peak RSS from wait4's rusage of each run).
measure() {
    local name=$1 runs=$2
    shift 2
    python3 - "$name" "$runs" "$@" <<'PY'
import os, statistics, subprocess, sys, time
name, runs, cmd = sys.argv[1], int(sys.argv[2]), sys.argv[3:]
walls, rss = [], []
for k in range(runs + 1):  # the first run warms the page cache and is not counted
    t0 = time.perf_counter()
    p = subprocess.Popen(cmd, stdout=subprocess.DEVNULL)
    _, status, usage = os.wait4(p.pid, 0)
    wall = time.perf_counter() - t0
    if os.waitstatus_to_exitcode(status) != 0:
        sys.exit(f"{name}: command failed: {' '.join(cmd)}")
    if k:
        walls.append(wall)
        rss.append(usage.ru_maxrss)
print(f"{statistics.median(walls):.4f} {min(walls):.4f} {max(rss)}")
PY
}

echo
echo "== tracephase analyze ($RUNS runs)"
OUT=$("$BIN" analyze "$FILE" --format json)
echo "${OUT:0:300} ..."
read -r TP_MEDIAN TP_MIN TP_RSS < <(measure tracephase "$RUNS" "$BIN" analyze "$FILE" --format json)
if command -v hyperfine >/dev/null; then
    hyperfine --warmup 2 --runs "$RUNS" --style basic --export-json target/bench-data/hyperfine.json \
        "$BIN analyze $FILE --format json"
    read -r TP_MEDIAN TP_MIN < <(python3 -c 'import json,sys; r = json.load(open(sys.argv[1]))["results"][0]; print("%.4f %.4f" % (r["median"], r["min"]))' \
        target/bench-data/hyperfine.json)
    echo "(times from hyperfine; peak RSS from the timing loop)"
fi

PANDAS_MEDIAN=""
if [ "${SKIP_PANDAS:-0}" != 1 ]; then
    if [ ! -x "$VENV/bin/python" ] || ! "$VENV/bin/python" -c 'import pandas, numpy' 2>/dev/null; then
        echo
        echo "== creating $VENV (pandas, numpy)"
        python3 -m venv "$VENV"
        "$VENV/bin/pip" install --quiet --disable-pip-version-check pandas numpy
    fi
    echo
    echo "== pandas + numpy reference ($RUNS runs)"
    "$VENV/bin/python" -c 'import pandas, numpy; print("pandas", pandas.__version__, "numpy", numpy.__version__)'
    OUT=$("$VENV/bin/python" benches/reference_pandas.py "$FILE")
    echo "${OUT:0:300} ..."
    read -r PANDAS_MEDIAN PANDAS_MIN PANDAS_RSS < <(measure pandas "$RUNS" "$VENV/bin/python" benches/reference_pandas.py "$FILE")
    echo
    echo "== lean peer: read_csv + one FFT per channel ($RUNS runs)"
    OUT=$("$VENV/bin/python" benches/lean_pandas.py "$FILE")
    echo "${OUT:0:300} ..."
    read -r LEAN_MEDIAN LEAN_MIN LEAN_RSS < <(measure lean "$RUNS" "$VENV/bin/python" benches/lean_pandas.py "$FILE")
fi
if command -v wc >/dev/null; then
    read -r WC_MEDIAN WC_MIN WC_RSS < <(measure wc "$RUNS" wc -l "$FILE")
fi

echo
echo "== summary ($(nproc) cores, load average $(cut -d' ' -f1-3 /proc/loadavg))"
python3 - "$BYTES" "$TP_MEDIAN" "$TP_MIN" "$TP_RSS" "$LIMIT_BYTES" "$PANDAS_MEDIAN" "${PANDAS_RSS:-}" \
    "${LEAN_MEDIAN:-}" "${LEAN_RSS:-}" "${WC_MEDIAN:-}" <<'PY'
import sys
size, med, best, rss_kb, limit = int(sys.argv[1]), float(sys.argv[2]), float(sys.argv[3]), int(sys.argv[4]), int(sys.argv[5])
pandas = float(sys.argv[6]) if sys.argv[6] else None
mbs = size / med / 1e6
rss = rss_kb * 1024
def verdict(ok):
    return "ok" if ok else "NOT MET"
print(f"tracephase: median {med*1e3:.0f} ms (best {best*1e3:.0f} ms) = {mbs:.0f} MB/s "
      f"(best {size/best/1e6:.0f} MB/s); peak RSS {rss_kb} KB = {rss/1e6:.1f} MB")
print(f"  goal >= 400 MB/s ........... {verdict(mbs >= 400)}")
print(f"  stretch >= 500 MB/s ........ {verdict(mbs >= 500)}")
print(f"  peak RSS <= {limit/1e6:.0f} MB ....... {verdict(rss <= limit)} ({rss/limit:.2f} of the limit)")
if pandas:
    ratio = pandas / med
    print(f"pandas + numpy: median {pandas*1e3:.0f} ms, peak RSS {sys.argv[7]} KB")
    print(f"  speed ratio {ratio:.1f}x against the fuller reference")
lean = float(sys.argv[8]) if sys.argv[8] else None
if lean:
    ratio = lean / med
    lean_rss = int(sys.argv[9])
    print(f"lean peer (read_csv + one FFT per channel): median {lean*1e3:.0f} ms, peak RSS {lean_rss} KB")
    print(f"  speed ratio {ratio:.1f}x; goal >= 5x ... {verdict(ratio >= 5)}; stretch >= 10x ... {verdict(ratio >= 10)}")
    print(f"  peak RSS {rss_kb / lean_rss:.2f} of the lean peer's; goal <= 0.5 ... {verdict(rss_kb <= 0.5 * lean_rss)}")
wc = float(sys.argv[10]) if sys.argv[10] else None
if wc:
    print(f"wc -l on the same file: median {wc*1e3:.1f} ms; tracephase takes {med / wc:.1f}x that (stretch <= 10x ... {verdict(med <= 10 * wc)})")
PY
