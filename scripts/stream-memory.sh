#!/usr/bin/env bash
# Peak memory of reading a large uncompressed TIFF a band of rows at a time
# (`open_bands`) against reading it whole (`read_raster_with`), in one run on
# this machine, recorded into docs/PERFORMANCE.md between the stream-read
# markers. A memory figure, not a speed benchmark: the times are one run each.
#
#   scripts/stream-memory.sh                 16000 × 12000 px (192 MP, 576 MB of 8-bit RGB)
#   scripts/stream-memory.sh WIDTH HEIGHT    another size
#
# The picture is written a strip at a time by examples/stream_memory.rs into a
# temporary folder (the disk needs its size free) and deleted afterwards.
#
# Also recorded (between the stream-jobs markers): the same picture as a planar
# TIFF (PlanarConfiguration 2) read in bands and whole, and one hot folder job
# (`platesmith hotfolder --once`: separate, write and inspect in one pass) on the
# interleaved picture, each its peak RSS.
set -euo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
doc="docs/PERFORMANCE.md"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
target="${CARGO_TARGET_DIR:-target}"
width="${1:-16000}"
height="${2:-12000}"

cargo build --release --quiet --example stream_memory --bin platesmith
bin="$target/release/examples/stream_memory"
platesmith="$target/release/platesmith"
"$bin" write "$tmp/picture.tif" "$width" "$height" >/dev/null
"$bin" write-planar "$tmp/planar.tif" "$width" "$height" >/dev/null
load_before="$(cut -d' ' -f1-3 /proc/loadavg)"

run() { # name, then the example's arguments
    local name="$1"
    shift
    /usr/bin/time -v "$bin" "$@" >"$tmp/$name.out" 2>"$tmp/$name.time"
    echo "peak_kb=$(sed -n 's/^[[:space:]]*Maximum resident set size (kbytes): //p' "$tmp/$name.time")" >>"$tmp/$name.out"
    echo "== $name"
    cat "$tmp/$name.out"
}
run bands64 bands "$tmp/picture.tif" 64
run bands1024 bands "$tmp/picture.tif" 1024
run whole whole "$tmp/picture.tif"
run planar64 bands "$tmp/planar.tif" 64
run planarwhole whole "$tmp/planar.tif"
# One hot folder job on the interleaved picture, default settings.
file_bytes="$(stat -c %s "$tmp/picture.tif")"
mkdir -p "$tmp/hot/in"
: >"$tmp/hot/ticket.toml"
mv "$tmp/picture.tif" "$tmp/hot/in/picture.tif"
start="$(date +%s.%N)"
/usr/bin/time -v "$platesmith" hotfolder "$tmp/hot" --once --settle 0.2 >"$tmp/hot.out" 2>"$tmp/hot.time"
echo "seconds=$(python3 -c "import sys; print(f'{float(sys.argv[2]) - float(sys.argv[1]):.1f}')" "$start" "$(date +%s.%N)")" >>"$tmp/hot.out"
echo "peak_kb=$(sed -n 's/^[[:space:]]*Maximum resident set size (kbytes): //p' "$tmp/hot.time")" >>"$tmp/hot.out"
echo "outputs=$(ls "$tmp/hot/out/picture" | tr '\n' ' ')" >>"$tmp/hot.out"
echo "== hot"
cat "$tmp/hot.out"
[[ -e "$tmp/hot/done/picture.tif" || -e "$tmp/hot/failed/picture.tif" ]] || { echo "stream-memory: the hot folder job did not finish" >&2; exit 1; }
load_after="$(cut -d' ' -f1-3 /proc/loadavg)"

for f in bands64 bands1024 planar64 planarwhole; do
    if [[ "$(grep '^checksum=' "$tmp/$f.out")" != "$(grep '^checksum=' "$tmp/whole.out")" ]]; then
        echo "stream-memory: $f read other samples than the whole read" >&2
        exit 1
    fi
done

LOAD_BEFORE="$load_before" LOAD_AFTER="$load_after" FILE_BYTES="$file_bytes" \
COMMIT="$(git rev-parse --short HEAD)" DATE="$(date -u '+%Y-%m-%d %H:%M UTC')" \
python3 - "$doc" "$tmp" <<'PY'
import os, sys

sys.path.insert(0, "scripts")
from record_block import record_block
doc, tmp = sys.argv[1:3]
def figures(name):
    return dict(l.strip().split("=", 1) for l in open(f"{tmp}/{name}.out") if "=" in l)
b64, b1024, whole = figures("bands64"), figures("bands1024"), figures("whole")
env = os.environ
mp = int(whole["pixels"]) / 1e6
mib = lambda f: f"{int(f['peak_kb']) / 1024:.0f} MiB"
model = open("/proc/cpuinfo").read().split("model name")[1].split(":", 1)[1].split("\n", 1)[0].strip()
record_block(doc, "stream-read", [
    f"Machine: {model}; commit {env['COMMIT']}; {env['DATE']}; load average (1, 5, 15 min) {env['LOAD_BEFORE']} before, {env['LOAD_AFTER']} after.",
    f"Picture: {mp:.0f} MP 8-bit RGB, uncompressed TIFF in strips of 16 rows, {int(env['FILE_BYTES']) / 2**20:.0f} MiB.",
    "",
    ("**Recorded on a loaded machine** (1-minute load average ≥ 0.5): the times are pessimistic and vary; the memory figures do not depend on the load."
     if float(env["LOAD_BEFORE"].split()[0]) >= 0.5 else "Recorded on an idle machine (1-minute load average < 0.5)."),
    "",
    "| read | peak RSS (`/usr/bin/time -v`) | wall, one run |",
    "| --- | --- | --- |",
    f"| `open_bands`, bands of 64 rows | {mib(b64)} | {b64['seconds']} s |",
    f"| `open_bands`, bands of 1024 rows | {mib(b1024)} | {b1024['seconds']} s |",
    f"| `read_raster_with` (whole) | {mib(whole)} | {whole['seconds']} s |",
])
p64, pwhole, hot = figures("planar64"), figures("planarwhole"), figures("hot")
record_block(doc, "stream-jobs", [
    f"Machine: {model}; commit {env['COMMIT']}; {env['DATE']}; load average (1, 5, 15 min) {env['LOAD_BEFORE']} before, {env['LOAD_AFTER']} after.",
    f"Picture: the same {mp:.0f} MP 8-bit RGB ({mp * 3:.0f} MB of samples), also written planar (PlanarConfiguration 2, uncompressed strips of 16 rows per plane).",
    "",
    "| job | peak RSS (`/usr/bin/time -v`) | wall, one run |",
    "| --- | --- | --- |",
    f"| planar TIFF, `open_bands`, bands of 64 rows | {mib(p64)} | {p64['seconds']} s |",
    f"| planar TIFF, `read_raster_with` (whole) | {mib(pwhole)} | {pwhole['seconds']} s |",
    f"| `platesmith hotfolder --once`: one job (separate, write, inspect in one pass; default ticket) | {mib(hot)} | {hot['seconds']} s |",
    "",
    f"The hot folder job's outputs: {hot['outputs']}.",
])
PY
