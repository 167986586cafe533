#!/usr/bin/env bash
# Browser check of the HTML report (issue 8): render the demo's report.html
# in headless Chromium, fail on console errors, and fail when the screenshot
# is blank. Usage: .ci/browser-test.sh [REPORT.html]  (default: run the demo
# into a temporary folder). Installs Debian's chromium when it is missing.
set -euo pipefail
cd "$(dirname "$0")/.."

work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

if [ $# -ge 1 ]; then
  report=$(realpath "$1")
else
  cargo build --release --quiet
  ./target/release/outturn run experiments/water_demand.yaml --out "$work/results" --quiet
  report="$work/results/report.html"
fi
[ -f "$report" ] || { echo "no report at $report" >&2; exit 1; }

browser=""
for b in chromium chromium-browser; do
  if command -v "$b" >/dev/null 2>&1; then browser=$b; break; fi
done
if [ -z "$browser" ]; then
  echo "installing chromium (Debian package)" >&2
  export DEBIAN_FRONTEND=noninteractive
  apt-get update -qq
  apt-get install -y -qq --no-install-recommends chromium >/dev/null
  browser=chromium
fi

shot="${SCREENSHOT:-$work/report.png}"
log="$work/chromium.log"
# --virtual-time-budget lets layout settle; the report has no script, so
# nothing else runs.
"$browser" --headless --no-sandbox --disable-gpu \
  --disable-background-networking --disable-component-update --disable-sync \
  --no-first-run --no-default-browser-check --mute-audio \
  --user-data-dir="$work/profile" \
  --enable-logging=stderr --v=0 \
  --hide-scrollbars --window-size=1280,2000 \
  --screenshot="$shot" "file://$report" >"$log" 2>&1 || {
  cat "$log" >&2
  echo "chromium failed" >&2
  exit 1
}

# Console messages are logged as 'CONSOLE(...)' or ':INFO:CONSOLE' lines;
# any console error, failed resource load or blocked request fails the check.
if grep -E "CONSOLE|Uncaught|ERR_FILE_NOT_FOUND|net::ERR|Refused to|Failed to load" "$log" >/dev/null; then
  grep -E "CONSOLE|Uncaught|ERR_FILE_NOT_FOUND|net::ERR|Refused to|Failed to load" "$log" >&2
  echo "console errors while loading the report" >&2
  exit 1
fi

python3 - "$shot" <<'PY'
"""Decode the PNG with the standard library and check it is not blank."""
import struct, sys, zlib

path = sys.argv[1]
data = open(path, "rb").read()
if data[:8] != b"\x89PNG\r\n\x1a\n":
    sys.exit(f"{path}: not a PNG")
pos, idat, width = 8, b"", 0
while pos < len(data):
    length, kind = struct.unpack(">I4s", data[pos:pos + 8])
    body = data[pos + 8:pos + 8 + length]
    if kind == b"IHDR":
        width, height, depth, colour, _, _, interlace = struct.unpack(">IIBBBBB", body)
        if depth != 8 or colour not in (2, 6) or interlace:
            sys.exit(f"unexpected PNG format: depth {depth}, colour type {colour}")
        channels = 3 if colour == 2 else 4
    elif kind == b"IDAT":
        idat += body
    pos += 12 + length
raw = zlib.decompress(idat)
stride = width * channels
prev = bytearray(stride)
rows = []
i = 0
for _ in range(height):
    filt = raw[i]
    line = bytearray(raw[i + 1:i + 1 + stride])
    i += 1 + stride
    for x in range(stride):
        a = line[x - channels] if x >= channels else 0
        b = prev[x]
        c = prev[x - channels] if x >= channels else 0
        if filt == 1:
            line[x] = (line[x] + a) & 255
        elif filt == 2:
            line[x] = (line[x] + b) & 255
        elif filt == 3:
            line[x] = (line[x] + (a + b) // 2) & 255
        elif filt == 4:
            p = a + b - c
            pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
            line[x] = (line[x] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
    rows.append(line)
    prev = line
# Grey levels of every 4th pixel of every 4th row.
values = []
for y in range(0, height, 4):
    line = rows[y]
    for x in range(0, width, 4):
        r, g, b = line[x * channels:x * channels + 3]
        values.append((r * 299 + g * 587 + b * 114) // 1000)
n = len(values)
mean = sum(values) / n
var = sum((v - mean) ** 2 for v in values) / n
non_white = sum(v < 240 for v in values) / n
print(f"screenshot {width}x{height}: grey mean {mean:.1f}, variance {var:.1f}, non-white share {non_white:.3f}")
if var < 100 or non_white < 0.02:
    sys.exit("the screenshot is blank")
PY
echo "browser check passed: $report"
