#!/usr/bin/env sh
# Renders the design report of a synth results folder with headless Chromium: a PNG of the
# page as on screen and a PDF as printed (A4), and, when pdftoppm (poppler-utils) is there,
# one PNG per printed page. Nothing is fetched from the network: the report is one
# self-contained file.
#
#   examples/render_report.sh DIR [WIDTH [HEIGHT]]
#
# writes DIR/report.png, DIR/report.pdf and DIR/report-page-N.png. To make a folder first:
#
#   cargo run --release -- synth scenarios/parcel-pusher.yaml --starts 600 --out out/parcel-pusher
#   examples/render_report.sh out/parcel-pusher
#
# Chromium on Debian: apt-get install -y chromium (and poppler-utils for the page images).
set -eu

dir=${1:?usage: $0 DIR [WIDTH [HEIGHT]]}
width=${2:-1200}
height=${3:-3000}
page="$dir/report.html"
[ -f "$page" ] || { echo "$page: not found; run crankwright synth --out $dir first" >&2; exit 2; }

browser=""
for b in chromium chromium-browser google-chrome; do
    if command -v "$b" >/dev/null 2>&1; then browser=$b; break; fi
done
if [ -z "$browser" ]; then
    echo "no Chromium found; install it (Debian: apt-get install -y chromium)" >&2
    exit 3
fi

abs=$(cd "$dir" && pwd)
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT INT TERM
run() {
    "$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
        --disable-background-networking --disable-component-update --disable-sync \
        --hide-scrollbars --user-data-dir="$profile" "$@" "file://$abs/report.html" \
        >/dev/null 2>&1
}
run --screenshot="$abs/report.png" --window-size="$width,$height"
echo "wrote $abs/report.png"
run --no-pdf-header-footer --print-to-pdf="$abs/report.pdf"
echo "wrote $abs/report.pdf"
if command -v pdftoppm >/dev/null 2>&1; then
    rm -f "$abs"/report-page-*.png
    pdftoppm -r 60 -png "$abs/report.pdf" "$abs/report-page"
    echo "wrote $(ls "$abs"/report-page-*.png | wc -l) page images $abs/report-page-N.png"
fi
