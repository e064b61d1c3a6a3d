#!/usr/bin/env bash
# Runs the criterion benches of the separation engine, of one whole
# separate job and of inspect, times the release binary on one recipe and on
# a 50-megapixel separate (wall time and peak memory from /usr/bin/time -v),
# and writes the figures with a description of the machine into
# docs/PERFORMANCE.md between the figures markers.
#
#   scripts/bench.sh            run the benches, then record
#   scripts/bench.sh --record   record from the last run's target/criterion
#
# The load average is read before and after the run. When the 1-minute load
# before the run is 0.5 or more (other work held half a core or more on
# average), the figures are marked as recorded on a loaded machine.
set -euo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
doc="docs/PERFORMANCE.md"
crit="${CARGO_TARGET_DIR:-target}/criterion"
meta="$(mktemp)"
work="$(mktemp -d)"
trap 'rm -f "$meta"; rm -rf "$work"' EXIT

load_before="$(cut -d' ' -f1-3 /proc/loadavg)"
echo "load average before: $load_before"

if [[ "${1:-}" != "--record" ]]; then
    rm -rf "$crit/forward_model" "$crit/separator_new" "$crit/table_build" "$crit/invert" "$crit/table_apply" "$crit/end_to_end" "$crit/inspect"
    cargo bench --bench separation --bench table_apply --bench end_to_end --bench inspect -- --noplot
fi

# Release binary: one recipe end to end (process start, separator build,
# one separation, JSON out), wall time and peak memory.
recipe_line=""
if [[ "${1:-}" != "--record" ]]; then
    cargo build --release --quiet
    bin="${CARGO_TARGET_DIR:-target}/release/platesmith"
    if [[ -x /usr/bin/time ]]; then
        best=""
        peak=""
        for _ in 1 2 3; do
            out="$(/usr/bin/time -f '%e %M' "$bin" recipe '#c81e3c' --json 2>&1 >/dev/null | tail -n 1)"
            t="${out%% *}"
            m="${out##* }"
            if [[ -z "$best" ]] || python3 -c "import sys; sys.exit(0 if $t < $best else 1)"; then
                best="$t"
                peak="$m"
            fi
        done
        recipe_line="$best $peak"
    fi
fi

# Release binary: `separate` of the 50-megapixel picture of the end-to-end
# bench (read, separate, composite and four plates, uncompressed), best of
# two, with peak memory; the input raster is 3 bytes a pixel, the output
# raster 4.
separate_line=""
if [[ "${1:-}" != "--record" && -x /usr/bin/time ]]; then
    cargo build --release --quiet --example compare_lcms2
    "${CARGO_TARGET_DIR:-target}/release/examples/compare_lcms2" --write-tiff "$work/harbour.tif" >"$work/picture"
    pixels="$(python3 -c "import sys; f = dict(kv.split('=', 1) for kv in open(sys.argv[1]).read().split()); print(int(f['width']) * int(f['height']))" "$work/picture")"
    best=""
    peak=""
    for _ in 1 2; do
        rm -rf "$work/out" && mkdir -p "$work/out"
        /usr/bin/time -v "$bin" separate "$work/harbour.tif" --out-dir "$work/out" --compression none --force >/dev/null 2>"$work/time"
        t="$(sed -n 's/^[[:space:]]*Elapsed (wall clock) time (h:mm:ss or m:ss): //p' "$work/time" | awk -F: '{ s = 0; for (i = 1; i <= NF; i++) s = s * 60 + $i; print s }')"
        m="$(sed -n 's/^[[:space:]]*Maximum resident set size (kbytes): //p' "$work/time")"
        if [[ -z "$best" ]] || python3 -c "import sys; sys.exit(0 if $t < $best else 1)"; then
            best="$t"
            peak="$m"
        fi
    done
    separate_line="$best $peak $pixels"
fi

load_after="$(cut -d' ' -f1-3 /proc/loadavg)"
echo "load average after: $load_after"

{
    echo "model=$(lscpu | sed -n 's/^Model name:[[:space:]]*//p' | head -n 1)"
    echo "cores=$(nproc)"
    echo "date=$(date -u '+%Y-%m-%d %H:%M UTC')"
    echo "rustc=$(rustc --version)"
    echo "commit=$(git rev-parse --short HEAD)"
    echo "load_before=$load_before"
    echo "load_after=$load_after"
    echo "recipe=$recipe_line"
    echo "separate=$separate_line"
} >"$meta"

python3 - "$crit" "$doc" "$meta" <<'PY'
import json, os, sys

sys.path.insert(0, "scripts")
from record_block import record_block

crit, doc, meta_path = sys.argv[1:4]
meta = dict(line.rstrip("\n").split("=", 1) for line in open(meta_path) if "=" in line)

def read(group, function, value=None):
    """Mean and 95 % interval (ns per iteration) and elements per iteration."""
    parts = [crit, group, function] + ([value] if value else [])
    path = os.path.join(*parts)
    try:
        est = json.load(open(os.path.join(path, "new", "estimates.json")))
        bench = json.load(open(os.path.join(path, "new", "benchmark.json")))
    except FileNotFoundError:
        return None
    mean = est["mean"]
    elements = (bench.get("throughput") or {}).get("Elements")
    return mean["point_estimate"], mean["confidence_interval"]["lower_bound"], \
        mean["confidence_interval"]["upper_bound"], elements

def seconds(ns):
    if ns >= 1e9:
        return f"{ns / 1e9:.3f} s"
    if ns >= 1e6:
        return f"{ns / 1e6:.1f} ms"
    if ns >= 1e3:
        return f"{ns / 1e3:.1f} µs"
    return f"{ns:.0f} ns"

rows = []
def row(label, r, per="time", target="", check=None, unit="M/s"):
    if r is None:
        rows.append(f"| {label} | not measured | | |")
        return
    mean, lo, hi, elements = r
    if per == "time":
        figure = f"{seconds(mean)} ({seconds(lo)}–{seconds(hi)})"
        value = mean
    elif per == "each":
        figure = f"{seconds(mean / elements)} per call"
        value = mean / elements
    elif per == "rate":
        rate = elements / (mean / 1e9) / 1e6
        figure = f"{rate:.1f} {unit} ({seconds(mean)} per {elements})"
        value = rate
    verdict = "" if check is None else ("met" if check(value) else "**missed**")
    rows.append(f"| {label} | {figure} | {target} | {verdict} |")

cores = int(meta["cores"])
row("forward model CMYK → Lab, 1 thread", read("forward_model", "lab"), "rate",
    "≥ 5 M evals/s", lambda v: v >= 5.0, "M evals/s")
row("Separator::new (coated offset, gamut boundary)", read("separator_new", "coated_offset"))
for intent in ("perceptual", "relative"):
    for grid in ("17", "33"):
        target, check = "", None
        if grid == "33":
            target = "≤ 1 s (issue 4), ≤ 0.5 s (issue 9)"
            check = lambda v: v <= 0.5e9
        row(f"table build, {intent}, grid {grid}, {cores} threads", read("table_build", intent, grid),
            "time", target, check)
row("invert, in-gamut target, cold start", read("invert", "in_gamut"), "each")
row("invert, out-of-gamut target, cold start", read("invert", "out_of_gamut"), "each")
for bits in ("rgb8", "rgb16"):
    for threads in ("1_thread", f"{cores}_threads"):
        target, check = "", None
        if bits == "rgb8" and threads == "1_thread":
            target, check = "≥ 100 Mpixel/s per core", (lambda v: v >= 100.0)
        label = f"apply table, {bits[3:]}-bit, {threads.replace('_', ' ')}, 4 Mpixel"
        row(label, read("table_apply", bits, threads), "rate", target, check, "Mpixel/s")
row("apply table, 8-bit, 1 thread, 4 Mpixel, scalar reference kernel", read("table_apply", "rgb8_scalar", "1_thread"),
    "rate", "", None, "Mpixel/s")
row("apply table, 8-bit, 1 thread, photo-like 12.5 Mpixel", read("table_apply", "photo_rgb8", "1_thread"),
    "rate", "≥ 150 Mpixel/s per core (issue 21)", lambda v: v >= 150.0, "Mpixel/s")
row("apply table, 8-bit, 1 thread, photo-like 12.5 Mpixel, scalar reference kernel",
    read("table_apply", "photo_rgb8_scalar", "1_thread"), "rate", "", None, "Mpixel/s")
for label, fast, slow in (("4 Mpixel random", "rgb8", "rgb8_scalar"), ("photo-like", "photo_rgb8", "photo_rgb8_scalar")):
    quick, reference = read("table_apply", fast, "1_thread"), read("table_apply", slow, "1_thread")
    if quick and reference:
        rows.append(f"| 8-bit kernel over the scalar reference, 1 thread, {label}, same run | {reference[0] / quick[0]:.2f} × | | |")
try:
    on_cpu = json.load(open(os.path.join(crit, "table_apply", "on_cpu.json")))
except FileNotFoundError:
    on_cpu = {}
for label, key in (("4 Mpixel random", "random"), ("photo-like 12.5 Mpixel", "photo")):
    if key in on_cpu:
        f = on_cpu[key]
        fast, slow = f["pixels"] / f["kernel_ns"] * 1e3, f["pixels"] / f["scalar_ns"] * 1e3
        verdict = ("met" if fast >= 150.0 else "**missed**") if key == "photo" else ""
        rows.append(f"| apply table, 8-bit, 1 thread, {label}, on-CPU time, best of 5: {f['kernel']} kernel / scalar | "
                    f"{fast:.1f} / {slow:.1f} Mpixel/s ({fast / slow:.2f} ×) | "
                    f"{'≥ 150 Mpixel/s per core (issue 21)' if key == 'photo' else ''} | {verdict} |")
one = read("table_apply", "rgb8", "1_thread")
many = read("table_apply", "rgb8", f"{cores}_threads")
if one and many:
    rows.append(f"| scaling, 8-bit, {cores} threads over 1 | {one[0] / many[0]:.2f} × | ≥ 1.8 × (issue 9) | "
                f"{'met' if one[0] / many[0] >= 1.8 else '**missed**'} |")
row("end to end: separate 50 Mpixel 8-bit RGB (read, separator, table, separate, 5 TIFFs uncompressed)",
    read("end_to_end", "separate_50mp_rgb8"), "time", "≤ 4 s (issue 5), ≤ 3 s (issue 9)", lambda v: v <= 3e9)
if meta.get("separate"):
    t, kb, px = meta["separate"].split()
    raster = int(px) * 7
    ratio = int(kb) * 1024 / raster
    rows.append(f"| release binary `separate` 50 Mpixel, `--compression none`, wall, best of 2 | {float(t):.2f} s | "
                f"≤ 3 s (issue 9) | {'met' if float(t) <= 3.0 else '**missed**'} |")
    rows.append(f"| its peak memory / (input raster + output raster, {raster / 2**20:.0f} MiB) | "
                f"{ratio:.2f} × (peak {int(kb) / 1024:.0f} MiB) | ≤ 2.5 × (issue 5) | {'met' if ratio <= 2.5 else '**missed**'} |")
row(f"inspect, 50-megapixel 8-bit RGB file, {cores} threads (read, separate, ΔE, regions)",
    read("inspect", "rgb_50mp"), "time", "≤ 4 s on 2 cores (issue 6)", lambda v: v <= 4e9)
row(f"inspect, 50-megapixel 8-bit CMYK file, {cores} threads (read, ink, regions)",
    read("inspect", "cmyk_50mp"), "time", "≤ 2 s on 2 cores (issue 6)", lambda v: v <= 2e9)
if meta.get("recipe"):
    t, kb = meta["recipe"].split()
    rows.append(f"| release binary `recipe '#c81e3c' --json`, wall, best of 3 | {float(t):.2f} s, "
                f"peak {int(kb) / 1024:.0f} MiB | | |")

loaded = float(meta["load_before"].split()[0]) >= 0.5
status = ("**Recorded on a loaded machine** (1-minute load average before the run ≥ 0.5): "
          "the figures are pessimistic and vary between runs."
          if loaded else "Recorded on an idle machine (1-minute load average before the run < 0.5).")
record_block(doc, "figures", [
    f"Machine: {meta['model']}, {meta['cores']} cores; {meta['rustc']}; commit {meta['commit']}; {meta['date']}.",
    f"Load average (1, 5, 15 min): {meta['load_before']} before the run, {meta['load_after']} after.",
    "",
    status,
    "",
    "| stage | mean (95 % interval) or rate | target | |",
    "| --- | --- | --- | --- |",
    *rows,
])
PY
