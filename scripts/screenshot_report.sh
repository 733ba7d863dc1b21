#!/usr/bin/env bash
# Render a filed review report (or any formdb HTML report) to a PNG with headless Chromium, to
# look at its layout and escaping in a real browser engine.
#
# Usage: scripts/screenshot_report.sh REPORT.html OUT.png [WIDTHxHEIGHT]
#        scripts/screenshot_report.sh REPORT.html OUT.pdf      (printed to A4 PDF, for filing)
#   e.g. formdb review report RUN --format html --out /tmp/run.html
#        scripts/screenshot_report.sh /tmp/run.html /tmp/run.png 1100x2600
# CHROMIUM overrides the browser (default /usr/bin/chromium). The browser runs with a throw-away
# profile and every background network feature off; the report itself loads nothing external.
set -euo pipefail

if [[ $# -lt 2 ]]; then
  echo "usage: $0 REPORT.html OUT.png [WIDTHxHEIGHT]" >&2
  exit 2
fi
report=$(realpath "$1")
out=$(realpath -m "$2")
size=${3:-1100x2600}
browser=${CHROMIUM:-/usr/bin/chromium}
if [[ ! -x "$browser" ]]; then
  echo "$0: no browser at $browser (set CHROMIUM)" >&2
  exit 2
fi
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
if [[ "$out" == *.pdf ]]; then
  what=(--no-pdf-header-footer --print-to-pdf="$out")
else
  what=(--hide-scrollbars --window-size="${size/x/,}" --screenshot="$out")
fi
"$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
  --disable-background-networking --disable-component-update --disable-sync \
  --user-data-dir="$profile" "${what[@]}" "file://$report" >/dev/null 2>&1
if [[ ! -s "$out" ]]; then
  echo "$0: nothing written to $out" >&2
  exit 1
fi
echo "$out"
