#!/usr/bin/env bash
# Renders the HTML page of `platesmith inspect --report` in headless Chromium
# (Debian's `chromium` package) and saves a screenshot, to look at the page.
#
#   scripts/screenshot-report.sh                 the demo poster, screenshot in target/report-shot/
#   scripts/screenshot-report.sh IMAGE [OUT.png] [inspect options...]
#
# Without an image it inspects the project's demo poster,
# examples/harbour-lights.png (an invented harbour festival, drawn by
# examples/make_demo_poster.rs).
set -euo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
work="${CARGO_TARGET_DIR:-target}/report-shot"
mkdir -p "$work"
input="${1:-}"
out="${2:-$work/report.png}"
shift $(( $# > 2 ? 2 : $# )) || true

if [[ -z "$input" ]]; then
    input="examples/harbour-lights.png"
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
