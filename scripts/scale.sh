#!/usr/bin/env bash
# Scale: `platesmith separate` with the default settings on 12, 48, 192 and
# 768-megapixel 8-bit RGB uncompressed TIFFs (the photo-like harbour of
# benches/support/photo.rs tiled, made by examples/make_scale_picture.rs),
# one after the other in one run: wall time, peak resident memory
# (/usr/bin/time -v) and the summary's stage timings, recorded into
# docs/PERFORMANCE.md between the scale markers.
#
#   scripts/scale.sh                 all four sizes
#   SCALE_SIZES="12 48" scripts/scale.sh   some of them
#   SCALE_TMP=/big/disk scripts/scale.sh   where the pictures go (768 MP: 2.3 GB in, ~1 GB out)
#
# Each picture and its outputs are deleted before the next size.
set -euo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
doc="docs/PERFORMANCE.md"
sizes="${SCALE_SIZES:-12 48 192 768}"
tmp="$(mktemp -d "${SCALE_TMP:-${TMPDIR:-/tmp}}/scale.XXXXXX")"
trap 'rm -rf "$tmp"' EXIT
target="${CARGO_TARGET_DIR:-target}"

cargo build --release --quiet
cargo build --release --quiet --example make_scale_picture
bin="$target/release/platesmith"
maker="$target/release/examples/make_scale_picture"

load_before="$(cut -d' ' -f1-3 /proc/loadavg)"
echo "load average before: $load_before"
: >"$tmp/figures"
for mp in $sizes; do
    input="$tmp/harbour-$mp.tif"
    "$maker" "$mp" "$input"
    in_bytes="$(stat -c %s "$input")"
    /usr/bin/time -v "$bin" separate "$input" --out-dir "$tmp/out-$mp" 2>"$tmp/time-$mp" >/dev/null || {
        cat "$tmp/time-$mp" >&2
        exit 1
    }
    peak_kb="$(sed -n 's/^[[:space:]]*Maximum resident set size (kbytes): //p' "$tmp/time-$mp")"
    wall="$(sed -n 's/^[[:space:]]*Elapsed (wall clock) time (h:mm:ss or m:ss): //p' "$tmp/time-$mp")"
    out_bytes="$(du -cb "$tmp/out-$mp"/*.tif | tail -1 | cut -f1)"
    timings="$(python3 -c 'import json,sys; t=json.load(open(sys.argv[1]))["timings"]; print(",".join(str(t[k]) for k in ("read_ms","table_ms","separate_ms","write_ms")))' "$tmp/out-$mp/harbour-$mp.summary.json")"
    echo "$mp $wall $peak_kb $in_bytes $out_bytes $timings" | tee -a "$tmp/figures"
    rm -rf "$input" "$tmp/out-$mp"
done
load_after="$(cut -d' ' -f1-3 /proc/loadavg)"
echo "load average after: $load_after"

LOAD_BEFORE="$load_before" LOAD_AFTER="$load_after" COMMIT="$(git rev-parse --short HEAD)" DATE="$(date -u '+%Y-%m-%d %H:%M UTC')" \
python3 - "$doc" "$tmp/figures" <<'PY'
import os, sys

sys.path.insert(0, "scripts")
from record_block import record_block
doc, figures = sys.argv[1:3]
env = os.environ

def seconds(wall):
    parts = [float(p) for p in wall.split(":")]
    return sum(p * 60 ** i for i, p in enumerate(reversed(parts)))

rows, base = [], None
for line in open(figures):
    mp, wall, peak_kb, in_b, out_b, timings = line.split()
    s = seconds(wall)
    per_mp = s / float(mp)
    base = base or per_mp
    read, table, sep, write = timings.split(",")
    peak = int(peak_kb) * 1024 / 1e6
    rows.append(
        f"| {mp} MP | {int(in_b) / 1e6:.0f} MB | {s:.2f} s | {per_mp * 1000:.1f} ms ({per_mp / base:.2f} ×) "
        f"| {peak:.0f} MB {'(met)' if peak <= 512 else '(**over 512**)'} | {int(out_b) / 1e6:.0f} MB "
        f"| {float(read) / 1000:.2f} / {float(table) / 1000:.2f} / {float(sep) / 1000:.2f} / {float(write) / 1000:.2f} s |"
    )
model = open("/proc/cpuinfo").read().split("model name")[1].split(":", 1)[1].split("\n", 1)[0].strip()
loaded = float(env["LOAD_BEFORE"].split()[0]) >= 0.5
record_block(doc, "scale", [
    f"Machine: {model}, {os.cpu_count()} threads; commit {env['COMMIT']}; {env['DATE']}.",
    f"Load average (1, 5, 15 min): {env['LOAD_BEFORE']} before the run, {env['LOAD_AFTER']} after."
    + (" **Recorded on a loaded machine**: wall times are pessimistic." if loaded else ""),
    "",
    "| picture | input | wall | per megapixel (against 12 MP) | peak RSS (target ≤ 512 MB) | outputs (TIFFs) | read / table / separate / write |",
    "| --- | --- | --- | --- | --- | --- | --- |",
    *rows,
])
PY
