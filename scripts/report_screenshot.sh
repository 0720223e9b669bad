#!/usr/bin/env bash
# A screenshot of a run report, taken with headless Chromium (for checking
# the layout by eye and for the docs). Chromium is not part of the build:
# install it by hand where you need it (Debian: apt-get install chromium).
#   scripts/report_screenshot.sh REPORT_DIR OUT.png [WIDTHxHEIGHT]
# WIDTHxHEIGHT is the browser window (default 1280x2400). The PNG is made
# smaller with pngquant (a 256-colour palette; fine for a page of flat
# colours) and optipng (lossless) where they are installed (Debian
# packages pngquant, optipng).
set -euo pipefail
if (($# < 2)); then
  echo "usage: $0 REPORT_DIR OUT.png [WIDTHxHEIGHT]" >&2
  exit 2
fi
report="$1"
out="$2"
size="${3:-1280x2400}"
if [[ ! -f "$report/index.html" ]]; then
  echo "$0: $report/index.html does not exist (not a report folder?)" >&2
  exit 1
fi
if [[ ! "$size" =~ ^[0-9]+x[0-9]+$ ]]; then
  echo "$0: window size must be WIDTHxHEIGHT, e.g. 1280x2400 (got '$size')" >&2
  exit 2
fi
browser=""
for b in chromium chromium-browser google-chrome; do
  if command -v "$b" > /dev/null; then
    browser="$b"
    break
  fi
done
if [[ -z "$browser" ]]; then
  echo "$0: no chromium found (Debian: apt-get install chromium)" >&2
  exit 1
fi
page="file://$(cd "$report" && pwd)/index.html"
out_abs="$(cd "$(dirname "$out")" && pwd)/$(basename "$out")"
rm -f "$out_abs"  # an old picture must not pass for a new one
profile="$(mktemp -d)"
trap 'rm -rf "$profile"' EXIT
# --no-sandbox: the sandbox needs user namespaces that containers and root
# shells often lack; the page is a local file the run wrote.
"$browser" --headless --no-sandbox --disable-gpu --hide-scrollbars --virtual-time-budget=5000 \
  --user-data-dir="$profile" \
  --window-size="${size/x/,}" --screenshot="$out_abs" "$page" > /dev/null 2>&1 || true
if [[ ! -s "$out_abs" ]]; then
  echo "$0: $browser wrote no screenshot to $out_abs" >&2
  exit 1
fi
if command -v pngquant > /dev/null; then pngquant --quality=60-95 --speed 1 --force --output "$out_abs" -- "$out_abs" || true; fi
if command -v optipng > /dev/null; then optipng -quiet -o2 "$out_abs"; fi
echo "$out_abs"
