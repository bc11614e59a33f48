#!/bin/sh
# Renders a concord HTML report with headless Chromium: a PNG screenshot of the page as a
# reader sees it, and optionally the printed A4 PDF, so that a person can look at both.
#
#   scripts/render-report.sh REPORT.html [OUT.png] [WIDTHxHEIGHT]
#
# Needs Debian's chromium (apt-get install chromium); CI does not run this script.
# Writes OUT.png (default: REPORT.png) and REPORT.pdf beside it.
set -eu
report=${1:?usage: scripts/render-report.sh REPORT.html [OUT.png] [WIDTHxHEIGHT]}
png=${2:-${report%.html}.png}
size=${3:-1000x4000}
pdf=${png%.png}.pdf
browser=$(command -v chromium || command -v chromium-browser || true)
if [ -z "$browser" ]; then
  echo "render-report: chromium not found; install it with: apt-get install chromium" >&2
  exit 2
fi
abs=$(cd "$(dirname "$report")" && pwd)/$(basename "$report")
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
flags="--headless --no-sandbox --disable-gpu --disable-background-networking \
--disable-component-update --disable-sync --no-first-run --user-data-dir=$profile"
# shellcheck disable=SC2086
"$browser" $flags --hide-scrollbars --window-size="$(echo "$size" | tr x ,)" \
  --screenshot="$png" "file://$abs" 2>/dev/null
# shellcheck disable=SC2086
"$browser" $flags --no-pdf-header-footer --print-to-pdf="$pdf" "file://$abs" 2>/dev/null
echo "render-report: wrote $png and $pdf"
