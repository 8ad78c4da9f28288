#!/usr/bin/env bash
# Renders a firmcall HTML report to PNG with headless Chromium (Debian package `chromium`), so that
# a person can look at it without a desktop. Not run by the tests.
#
#   bash tools/render_report.sh REPORT.html OUT.png [WIDTH] [HEIGHT]
#
# WIDTH x HEIGHT is the window in CSS pixels (default 1200 x 9000: tall enough for the whole sample
# report on one image). Installs chromium with apt-get when it is missing (needs root).
set -euo pipefail

if [ $# -lt 2 ]; then
  echo "usage: $0 REPORT.html OUT.png [WIDTH] [HEIGHT]" >&2
  exit 2
fi
html=$1
png=$2
width=${3:-1200}
height=${4:-9000}
if [ ! -f "$html" ]; then
  echo "$0: $html: no such file" >&2
  exit 2
fi
if ! command -v chromium >/dev/null 2>&1; then
  apt-get update -qq
  DEBIAN_FRONTEND=noninteractive apt-get install -y -qq --no-install-recommends chromium fonts-dejavu-core
fi
abs_html=$(cd "$(dirname "$html")" && pwd)/$(basename "$html")
abs_png=$(cd "$(dirname "$png")" && pwd)/$(basename "$png")
# A private profile folder, so that the run leaves nothing in the user's home.
profile=$(mktemp -d)
trap 'rm -rf "$profile"' EXIT
chromium --headless --no-sandbox --disable-gpu --hide-scrollbars --user-data-dir="$profile" \
  --window-size="$width,$height" --screenshot="$abs_png" "file://$abs_html" 2>/dev/null
echo "$0: wrote $png ($width x $height)"
