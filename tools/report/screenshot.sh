#!/usr/bin/env bash
# Render an HTML report of `turbid report` to a PNG screenshot with headless
# Chromium (Debian package `chromium`), to see the report as a browser does.
#
#   tools/report/screenshot.sh REPORT.html OUT.png [WIDTHxHEIGHT]
#
# Exit 0 with the screenshot written; 3 when no Chromium is installed (the
# caller decides whether that is a skip); 1 when Chromium fails or writes an
# empty file. The report must be self-contained: the browser runs with
# networking disabled (--no-proxy-server pointing nowhere), so an external
# resource would simply be missing from the picture.
set -euo pipefail
if [ $# -lt 2 ]; then
    echo "usage: $0 REPORT.html OUT.png [WIDTHxHEIGHT]" >&2
    exit 2
fi
html="$(realpath "$1")"
out="$(realpath -m "$2")"
size="${3:-1200x3000}"
browser=""
for b in chromium chromium-browser google-chrome; do
    if command -v "$b" >/dev/null 2>&1; then
        browser="$b"
        break
    fi
done
if [ -z "$browser" ]; then
    echo "no headless Chromium found (install the Debian package 'chromium')" >&2
    exit 3
fi
profile="$(mktemp -d)"
trap 'rm -rf "$profile"' EXIT
rm -f "$out"
# --no-sandbox: CI containers run as root, where Chromium's sandbox refuses to start.
timeout 120 "$browser" --headless --no-sandbox --disable-gpu --hide-scrollbars \
    --user-data-dir="$profile" --proxy-server="127.0.0.1:9" --proxy-bypass-list="<-loopback>" \
    --window-size="${size/x/,}" --screenshot="$out" "file://$html" >/dev/null 2>&1 || true
if [ ! -s "$out" ]; then
    echo "Chromium did not write a screenshot of $html" >&2
    exit 1
fi
echo "$out"
