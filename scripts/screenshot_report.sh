#!/usr/bin/env bash
# Render a mergecheck HTML report in headless Chromium and save PNG screenshots.
# Needs Debian's chromium package (apt-get install chromium).
# Usage: scripts/screenshot_report.sh REPORT.html OUT_PREFIX [HEIGHT]
set -euo pipefail
report="$(realpath "$1")"
out="$2"
height="${3:-6000}"
profile="$(mktemp -d)"
chromium --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
  --disable-background-networking --disable-component-update --disable-sync \
  --user-data-dir="$profile" --hide-scrollbars --window-size=1100,"$height" \
  --screenshot="$out.png" "file://$report" 2>/dev/null
rm -rf "$profile"
echo "$out.png"
