#!/usr/bin/env bash
# Render a tankwave HTML report (or an SVG plot) to a PNG with the system
# browser running headless, to look at a report without a desktop.
#
#   scripts/render-report.sh REPORT.html [OUT.png] [WIDTHxHEIGHT]
#
# Needs Chromium (Debian/Ubuntu: apt-get install -y chromium). The report is
# self-contained, so the browser is started with networking features off.
# --no-sandbox is only needed when running as root (e.g. in a container).
set -euo pipefail

if [ $# -lt 1 ]; then
    echo "usage: $0 REPORT.html [OUT.png] [WIDTHxHEIGHT]" >&2
    exit 2
fi
in="$1"
out="${2:-${in%.*}.png}"
size="${3:-1200x3000}"
if [ ! -f "$in" ]; then
    echo "$0: no such file: $in" >&2
    exit 2
fi
browser=""
for b in chromium chromium-browser; do
    if command -v "$b" >/dev/null 2>&1; then
        browser="$b"
        break
    fi
done
if [ -z "$browser" ]; then
    echo "$0: Chromium not found (Debian: apt-get install -y chromium)" >&2
    exit 3
fi
abs_in="$(cd "$(dirname "$in")" && pwd)/$(basename "$in")"
abs_out="$(cd "$(dirname "$out")" && pwd)/$(basename "$out")"
profile="$(mktemp -d)"
trap 'rm -rf "$profile"' EXIT
sandbox=()
if [ "$(id -u)" = "0" ]; then
    sandbox=(--no-sandbox)
fi
"$browser" --headless "${sandbox[@]}" --disable-gpu \
    --disable-background-networking --disable-component-update --disable-sync \
    --no-first-run --hide-scrollbars --user-data-dir="$profile" \
    --window-size="${size/x/,}" --screenshot="$abs_out" "file://$abs_in" \
    >/dev/null 2>&1
if [ ! -s "$abs_out" ]; then
    echo "$0: the browser wrote no image to $abs_out" >&2
    exit 3
fi
echo "$abs_out"
