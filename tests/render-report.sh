#!/usr/bin/env bash
# Render the report of every demo scenario to PNG in headless Chromium, so a person can look at
# what a reviewer will see. Installs Debian's chromium when it is absent (needs root and apt).
#
#   bash tests/render-report.sh [OUT_DIR]      (default: target/report-render)
#
# Prints the path of each PNG. The pages open with no network access: the report is
# self-contained, and the browser's own background traffic is switched off below.
set -euo pipefail

root="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
out="${1:-$root/target/report-render}"
mkdir -p "$out"

browser="$(command -v chromium || command -v chromium-browser || true)"
if [ -z "$browser" ]; then
  echo "installing Debian chromium ..." >&2
  if [ "$(id -u)" -ne 0 ]; then
    echo "error: chromium is missing and this script is not root; hint: apt-get install -y chromium" >&2
    exit 2
  fi
  apt-get update -q >&2
  DEBIAN_FRONTEND=noninteractive apt-get install -y -q chromium >&2
  browser="$(command -v chromium)"
fi

(cd "$root" && cargo build --release -q)
bin="$root/target/release/hoverline"

for scenario in "$root"/scenarios/*.toml; do
  name="$(basename "$scenario" .toml)"
  dir="$out/$name"
  NO_COLOR=1 "$bin" report "$scenario" --out "$dir" > "$out/$name.txt" 2> "$out/$name.err" || {
    echo "warning: hoverline report $name exited $? (see $out/$name.err)" >&2
  }
  [ -f "$dir/report.html" ] || { echo "error: no report for $name" >&2; continue; }
  profile="$(mktemp -d)"
  png="$out/$name.png"
  "$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync \
    --user-data-dir="$profile" --hide-scrollbars \
    --screenshot="$png" --window-size=1280,4000 \
    "file://$dir/report.html" > /dev/null 2>&1 || true
  rm -rf "$profile"
  if [ -s "$png" ]; then
    echo "$png"
  else
    echo "error: chromium wrote no screenshot for $name" >&2
  fi
done
