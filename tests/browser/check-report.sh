#!/usr/bin/env bash
# Browser check of the HTML report: renders the demo report (and one with a circuit model) in
# headless Chromium with no network, fails on any console message of level warning or error
# (the page has no script, so there should be none), checks the DOM holds the plots, and checks
# that a screenshot is not blank by reading its pixels (tests/browser/pngtool.py).
#
#   tests/browser/check-report.sh [--keep-screenshot PATH]
#
# Needs cargo, python3 and Chromium (CHROMIUM, default /usr/bin/chromium).
set -euo pipefail
cd "$(dirname "$0")/../.."

CHROMIUM=${CHROMIUM:-/usr/bin/chromium}
KEEP=""
if [[ ${1:-} == --keep-screenshot ]]; then
  KEEP=${2:?--keep-screenshot needs a path}
fi
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
"$bin" report fixtures/demo-lab-bench-series-rlc-semicolon-decimal-comma.csv \
  --expect fixtures/demo-lab-bench-series-rlc.toml -o "$work/expect.html"

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
for page in demo expect; do
  html="$work/$page.html"
  echo "-- rendering $page.html"
  # The DOM after loading, with the console logged to stderr.
  if ! chromium --enable-logging=stderr --v=0 --dump-dom "file://$html" \
      >"$work/$page.dom" 2>"$work/$page.log"; then
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
  if [[ $svgs -lt 4 || $scripts -ne 0 ]] || ! grep -q "Safety" "$work/$page.dom"; then
    echo "error: $page.html: the rendered page lacks its plots or its safety section, or has a script" >&2
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

if [[ $status -ne 0 ]]; then
  echo "browser check FAILED" >&2
  exit 1
fi
echo "browser check passed"
