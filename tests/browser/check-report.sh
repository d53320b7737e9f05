#!/usr/bin/env bash
# Browser check of the HTML report: renders the demo report (and one with a circuit model) in
# headless Chromium with no network and checks what a reader sees (tests/browser/domcheck.py):
# no console message of level warning or error (the page has no script, so there should be none);
# nothing fetched, by Chromium's own network log; every plot the page promises in every capture
# section, each with its data drawn (not an empty frame or a legend alone); the summary table's
# figures equal to `tracephase analyze --format json` of the same captures; and a screenshot
# that is not blank, read pixel by pixel (tests/browser/pngtool.py).
#
#   tests/browser/check-report.sh [--keep-screenshot PATH] [--update-readme-picture]
#
# --update-readme-picture redraws tests/browser/report-screenshot.png (the README's picture)
# from the current build: the compressor-before-capacitor section, 1000 pixels wide.
#
# Needs cargo, python3 and Chromium (CHROMIUM, default /usr/bin/chromium).
set -euo pipefail
cd "$(dirname "$0")/../.."

CHROMIUM=${CHROMIUM:-/usr/bin/chromium}
KEEP=""
PICTURE=0
while [[ $# -gt 0 ]]; do
  case $1 in
    --keep-screenshot) KEEP=${2:?--keep-screenshot needs a path}; shift 2 ;;
    --update-readme-picture) PICTURE=1; shift ;;
    *) echo "error: unknown option $1" >&2; exit 2 ;;
  esac
done
if [[ ! -x $CHROMIUM ]]; then
  echo "error: Chromium not found at $CHROMIUM (set CHROMIUM or install the chromium package)" >&2
  exit 1
fi

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

echo "-- building the reports"
cargo build --release --locked --quiet
bin=target/release/tracephase
"$bin" report fixtures/demo-*.csv -o "$work/demo.html"
"$bin" analyze fixtures/demo-*.csv --format json >"$work/demo.jsonl"
"$bin" report fixtures/demo-lab-bench-series-rlc-semicolon-decimal-comma.csv \
  --expect fixtures/demo-lab-bench-series-rlc.toml -o "$work/expect.html"
# a capture of 3 s (15 windows) with a load switched at 2.0 s, for the trend plot
python3 - "$work/long-bank-switching.csv" <<'PY'
import math, sys
with open(sys.argv[1], "w") as f:
    f.write("time,V,I\n")
    for k in range(30000):
        t = k / 10000
        w = 2 * math.pi * 50 * t
        i = (20, -36.87) if t < 2.0 else (13.5, -8.0)
        v = 230 * math.sqrt(2) * math.sin(w)
        c = i[0] * math.sqrt(2) * math.sin(w + math.radians(i[1])) + 2 * math.sqrt(2) * math.sin(5 * w)
        f.write(f"{t:.4f},{v:.4f},{c:.4f}\n")
PY
"$bin" report "$work/long-bank-switching.csv" -o "$work/long.html"
# the plots each capture section promises: the four of every capture, the tolerance band where a
# circuit model was given, and the trend of a capture of four windows or more
declare -A PLOTS=([demo]=waveform,phasor,spectrum,triangle [expect]=waveform,phasor,spectrum,triangle,band \
  [long]=waveform,phasor,spectrum,triangle,trend)

# Flags: no sandbox (CI runs as root in a container), no GPU, no background traffic, and every
# host name resolves to nothing, so the page cannot fetch anything even if it tried.
chromium() {
  local profile
  profile=$(mktemp -d -p "$work")
  timeout 120 "$CHROMIUM" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync \
    --disable-default-apps --disable-extensions --mute-audio --hide-scrollbars \
    --host-resolver-rules="MAP * ~NOTFOUND" --proxy-server="127.0.0.1:9" \
    --user-data-dir="$profile" "$@"
}

status=0
for page in demo expect long; do
  html="$work/$page.html"
  echo "-- rendering $page.html"
  # The DOM after loading, with the console logged to stderr.
  if ! chromium --enable-logging=stderr --v=0 --log-net-log="$work/$page.netlog" \
      --dump-dom "file://$html" >"$work/$page.dom" 2>"$work/$page.log"; then
    echo "error: Chromium failed on $page.html:" >&2
    tail -20 "$work/$page.log" >&2
    status=1
    continue
  fi
  if grep -E "CONSOLE|Uncaught|Failed to load resource|net::ERR" "$work/$page.log" >"$work/$page.console"; then
    echo "error: the browser console shows messages for $page.html:" >&2
    cat "$work/$page.console" >&2
    status=1
  else
    echo "   console: clean"
  fi
  svgs=$(grep -o "<svg" "$work/$page.dom" | wc -l)
  scripts=$(grep -ci "<script" "$work/$page.dom" || true)
  echo "   DOM: $svgs inline SVG plots, $scripts script elements"
  if [[ $scripts -ne 0 ]] || ! grep -q "Safety" "$work/$page.dom"; then
    echo "error: $page.html: the rendered page lacks its safety section, or has a script" >&2
    status=1
  fi
  python3 tests/browser/domcheck.py plots "$work/$page.dom" "${PLOTS[$page]}" || status=1
  if [[ $page == demo ]]; then  # a summary table comes with several captures
    python3 tests/browser/domcheck.py summary "$work/$page.dom" "$work/$page.jsonl" || status=1
  fi
  if [[ -s $work/$page.netlog ]]; then
    python3 tests/browser/domcheck.py netlog "$work/$page.netlog" || status=1
  else
    echo "error: Chromium wrote no network log for $page.html" >&2
    status=1
  fi
done

echo "-- screenshot of demo.html"
chromium --screenshot="$work/demo.png" --window-size=1280,2400 "file://$work/demo.html" \
  >"$work/shot.log" 2>&1 || { tail -20 "$work/shot.log" >&2; exit 1; }
if ! python3 tests/browser/pngtool.py check "$work/demo.png" 1; then
  status=1
fi
if [[ -n $KEEP ]]; then
  cp "$work/demo.png" "$KEEP"
  echo "   kept the screenshot as $KEEP"
fi
if [[ $PICTURE == 1 ]]; then
  echo "-- the README picture from this build"
  "$bin" report fixtures/demo-workshop-compressor-before-capacitor.csv -o "$work/one.html"
  # the capture's section alone, with the report's own styles, drawn from the top
  python3 tests/browser/domcheck.py only "$work/one.html" capture-1 "$work/section.html"
  chromium --screenshot="$work/one.png" --window-size=1100,1800 "file://$work/section.html" \
    >"$work/one.log" 2>&1 || { tail -20 "$work/one.log" >&2; exit 1; }
  python3 tests/browser/pngtool.py crop "$work/one.png" tests/browser/report-screenshot.png 55 50 1000 1690
  echo "   wrote tests/browser/report-screenshot.png"
fi

if [[ $status -ne 0 ]]; then
  echo "browser check FAILED" >&2
  exit 1
fi
echo "browser check passed"
