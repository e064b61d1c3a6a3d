#!/usr/bin/env bash
# Renders the HTML page of `platesmith inspect --report` in headless Chromium
# (Debian's `chromium` package) and saves a screenshot, to look at the page.
#
#   scripts/screenshot-report.sh                 demo scene (made here), screenshot in target/report-shot/
#   scripts/screenshot-report.sh IMAGE [OUT.png] [inspect options...]
#
# The demo scene is drawn by this script (Python standard library only): a
# poster for the fictional "Harbour Lantern Night" with a vivid sky and sea
# (beyond an offset press's gamut) and lines of thin black type (rich black
# in the separation).
set -euo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
work="${CARGO_TARGET_DIR:-target}/report-shot"
mkdir -p "$work"
input="${1:-}"
out="${2:-$work/report.png}"
shift $(( $# > 2 ? 2 : $# )) || true

if [[ -z "$input" ]]; then
    input="$work/harbour-lantern-night.png"
    python3 - "$input" <<'PY'
import math, struct, sys, zlib

W, H = 1200, 800
rows = []
for y in range(H):
    row = bytearray()
    for x in range(W):
        t = y / H
        if y < 430:
            # Dusk sky: slate blue to a warm glow near the horizon (mostly printable).
            k = y / 430
            r, g, b = int(70 + 160 * k ** 1.5), int(85 + 70 * k), int(150 - 40 * k)
            # Two lanterns: saturated red discs with a soft halo.
            for cx, cy, rad in ((330, 210, 46), (860, 150, 34)):
                d = math.hypot(x - cx, y - cy)
                if d < rad:
                    r, g, b = 255, 40, 20
                elif d < rad * 2.2:
                    k = (d - rad) / (rad * 1.2)
                    r, g, b = int(250 * (1 - k) + r * k), int(170 * (1 - k) + g * k), int(90 * (1 - k) + b * k)
        elif y < 470 + 40 * math.sin(x / 90):
            # Hills: a muted green.
            r, g, b = 70, int(120 + 25 * math.sin(x / 37)), 65
        else:
            # Harbour water: a vivid cyan, brightest in the middle.
            k = max(0.0, 1 - abs(x - 600) / 600) * (1 - (y - 430) / 370)
            r, g, b = int(60 - 60 * k), int(120 + 80 * k), int(150 + 100 * k)
        # A pale panel with lines of thin black type (2 px strokes).
        if 560 <= y < 760 and 80 <= x < 640:
            r, g, b = 246, 240, 228
            line = (y - 580) % 34
            if 0 <= line < 16 and 100 <= x < 620 and y < 740:
                stroke = (x * 7 + (y // 34) * 13) % 11
                if stroke in (0, 1) or line in (0, 1):
                    r, g, b = 0, 0, 0
        row += bytes((min(max(r, 0), 255), min(max(g, 0), 255), min(max(b, 0), 255)))
    rows.append(b"\0" + bytes(row))

def chunk(kind, data):
    c = kind + data
    return struct.pack(">I", len(data)) + c + struct.pack(">I", zlib.crc32(c) & 0xFFFFFFFF)

ppm = round(300 / 0.0254)  # 300 ppi in pixels per metre (PNG pHYs)
png = b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", W, H, 8, 2, 0, 0, 0))
png += chunk(b"pHYs", struct.pack(">IIB", ppm, ppm, 1))
png += chunk(b"IDAT", zlib.compress(b"".join(rows), 6)) + chunk(b"IEND", b"")
open(sys.argv[1], "wb").write(png)
PY
fi

cargo build --release --quiet
bin="${CARGO_TARGET_DIR:-target}/release/platesmith"
report="$work/report"
set +e
"$bin" inspect "$input" --report "$report" --force "$@"
code=$?
set -e
if [[ $code -ge 2 ]]; then
    echo "inspect failed (exit $code)" >&2
    exit "$code"
fi
stem="$(basename "${input%.*}")"
page="$(cd "$report" && pwd)/$stem.inspect.html"
browser="$(command -v chromium || command -v chromium-browser || true)"
if [[ -z "$browser" ]]; then
    echo "chromium is not installed (apt-get install -y chromium)" >&2
    exit 2
fi
shoot() { # URL OUT HEIGHT
    "$browser" --headless --no-sandbox --disable-gpu --hide-scrollbars --window-size="1280,$3" \
        --screenshot="$(realpath -m "$2")" "$1" 2>/dev/null
}
shoot "file://$page" "$out" 5200
echo "page:       $page"
echo "screenshot: $out (whole page)"
# Slices of 1200 px, easier to read than the whole page scaled down: the page
# in a frame shifted up by the slice's offset.
for i in 0 1 2 3; do
    frame="$work/slice-$i.html"
    printf '<!DOCTYPE html><body style="margin:0;overflow:hidden"><iframe src="file://%s" style="border:0;width:1280px;height:6400px;margin-top:-%dpx"></iframe></body>\n' "$page" $((i * 1200)) >"$frame"
    slice="${out%.png}-$((i + 1)).png"
    shoot "file://$(realpath "$frame")" "$slice" 1200
    echo "slice:      $slice"
done
