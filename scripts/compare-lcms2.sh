#!/usr/bin/env bash
# Compares platesmith's table application with lcms2 and a memory copy on
# the same 50-megapixel 8-bit RGB picture, in one run on this machine, and
# records the figures, the machine and the peak memory (/usr/bin/time -v)
# into docs/PERFORMANCE.md between the lcms2 markers.
#
#   scripts/compare-lcms2.sh               the kernel comparison, then the end-to-end one; record both
#   scripts/compare-lcms2.sh --stand-in    kernel: a stand-in profile built by the example (not for the record)
#   scripts/compare-lcms2.sh --end-to-end  the end-to-end comparison only
#
# The end-to-end comparison (scripts/compare_end_to_end.py) times whole
# processes on a 48-megapixel 8-bit RGB uncompressed TIFF made here from the
# demo picture: `platesmith separate --plates none` with the default settings
# against Little CMS 2 through Pillow (decode, sRGB → the exported profile,
# encode an uncompressed TIFF), alternating, with an empty table cache (cold)
# and a filled one (warm), and records it between the lcms2-end-to-end
# markers. REPEATS (default 5) sets the repetitions of each.
#
# Extra arguments after the first are passed to `platesmith profile` (model
# options); the example's own table uses the default settings, so pass none
# for the recorded comparison.
set -euo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
doc="docs/PERFORMANCE.md"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
target="${CARGO_TARGET_DIR:-target}"

stand_in=0
end_to_end_only=0
if [[ "${1:-}" == "--stand-in" ]]; then
    stand_in=1
    shift
elif [[ "${1:-}" == "--end-to-end" ]]; then
    end_to_end_only=1
    shift
fi

load_before="$(cut -d' ' -f1-3 /proc/loadavg)"
echo "load average before: $load_before"
cargo build --release --quiet
bin="$target/release/platesmith"
example="$target/release/examples/compare_lcms2"

if [[ $end_to_end_only -eq 1 ]]; then
    "$bin" profile --out "$tmp/press.icc"
    python3 scripts/compare_end_to_end.py "$bin" "$tmp/press.icc" "$tmp" "$doc" "${REPEATS:-5}"
    exit 0
fi
cargo build --release --quiet --example compare_lcms2

profile_args=()
if [[ $stand_in -eq 0 ]]; then
    if ! "$bin" profile --help >/dev/null 2>&1; then
        echo "compare-lcms2: this build has no 'platesmith profile' command; run with --stand-in for a trial (not recorded as final)" >&2
        exit 2
    fi
    "$bin" profile --out "$tmp/press.icc" "$@"
    profile_args=(--profile "$tmp/press.icc")
fi

/usr/bin/time -v "$example" "${profile_args[@]}" >"$tmp/figures" 2>"$tmp/time"
cat "$tmp/figures"
peak_kb="$(sed -n 's/^[[:space:]]*Maximum resident set size (kbytes): //p' "$tmp/time")"
wall="$(sed -n 's/^[[:space:]]*Elapsed (wall clock) time (h:mm:ss or m:ss): //p' "$tmp/time")"
load_after="$(cut -d' ' -f1-3 /proc/loadavg)"
echo "load average after: $load_after; peak memory ${peak_kb} kB"

LOAD_BEFORE="$load_before" LOAD_AFTER="$load_after" STAND_IN="$stand_in" WALL="$wall" PEAK_KB="$peak_kb" \
COMMIT="$(git rev-parse --short HEAD)" DATE="$(date -u '+%Y-%m-%d %H:%M UTC')" \
python3 - "$doc" "$tmp/figures" <<'PY'
import os, sys

sys.path.insert(0, "scripts")
from record_block import record_block
doc, figures = sys.argv[1:3]
f = dict(line.rstrip("\n").split("=", 1) for line in open(figures) if "=" in line)
t = f["threads"]
env = os.environ
loaded = float(env["LOAD_BEFORE"].split()[0]) >= 0.5
status = ("**Recorded on a loaded machine** (1-minute load average before the run ≥ 0.5): wall-clock "
          "figures are pessimistic; the on-CPU one-thread figures leave out time spent waiting for a core."
          if loaded else "Recorded on an idle machine (1-minute load average before the run < 0.5).")
stand_in = env["STAND_IN"] == "1"
def met(v, target):
    return "met" if float(v) >= target else "**missed**"
rows = [
    f"| default table build (perceptual, grid 33), {t} threads | {f['table_build_s']} s wall, {f.get('table_build_cpu_s', '–')} s CPU over all threads | ≤ 1 s (issue 4), ≤ 0.5 s (issue 9) |",
    f"| (a) platesmith `apply_rgb8`, 1 thread | {f['platesmith_1_thread_mpx_s']} Mpixel/s wall; {f.get('platesmith_1_thread_cpu_mpx_s', '–')} Mpixel/s on-CPU | |",
    f"| (a) platesmith `apply_rgb8`, {t} threads | {f[f'platesmith_{t}_threads_mpx_s']} Mpixel/s wall; scaling {f['platesmith_scaling']} × | ≥ 1.8 × (issue 9): {met(f['platesmith_scaling'], 1.8)} |",
    f"| (b) lcms2, default flags, 1 thread | {f['lcms2_default_1_thread_mpx_s']} Mpixel/s wall (setup {f['lcms2_setup_default_s']} s) | |",
    f"| (b) lcms2, `NO_CACHE`, 1 thread | {f['lcms2_no_cache_1_thread_mpx_s']} Mpixel/s wall (setup {f['lcms2_setup_no_cache_s']} s) | |",
    f"| (b) lcms2, `NO_CACHE`, rows over {t} rayon threads | {f[f'lcms2_no_cache_{t}_threads_rows_mpx_s']} Mpixel/s wall | |",
    f"| (b) lcms2, fastest one-thread flags ({f['lcms2_fastest_1_thread_flags']}) | {f.get('lcms2_fastest_1_thread_cpu_mpx_s', '–')} Mpixel/s on-CPU | |",
    f"| (c) memory copy of the RGB bytes | {f['memcpy_gb_s']} GB/s ({f['memcpy_mpx_s']} Mpixel/s) | |",
    f"| (a)/(b), 1 thread, wall | {f['ratio_a_over_b_1_thread']} × | ≥ 1.5 × (issue 9): {met(f['ratio_a_over_b_1_thread'], 1.5)} |",
    f"| (a)/(b), 1 thread, on-CPU | {f.get('ratio_a_over_b_1_thread_cpu', '–')} × | ≥ 1.5 × (issue 9): {met(f.get('ratio_a_over_b_1_thread_cpu', 0), 1.5)} |",
    f"| (a)/(b), {t} threads, wall | {f[f'ratio_a_over_b_{t}_threads']} × | |",
    f"| (a)/(c), 1 thread, wall | {f['ratio_a_over_c_1_thread']} of the copy's throughput | |",
    f"| mean \\|platesmith − lcms2\\| per plate, C, M, Y, K | {f['mean_abs_difference_percent_cmyk'].replace(',', ' %, ')} % | |",
    f"| whole run (picture, table, profile, all measurements) | wall {env['WALL']}, peak memory {int(env['PEAK_KB']) / 1024:.0f} MiB | |",
]
model = open("/proc/cpuinfo").read().split("model name")[1].split(":", 1)[1].split("\n", 1)[0].strip()
record_block(doc, "lcms2", [
    f"Machine: {model}, {t} threads; commit {env['COMMIT']}; {env['DATE']}; {f['pixels']} pixels.",
    f"Load average (1, 5, 15 min): {env['LOAD_BEFORE']} before the run, {env['LOAD_AFTER']} after.",
    f"Profile: {f['profile']}." + (" **Stand-in profile: a trial, not the figure for the record.**" if stand_in else ""),
    "",
    status,
    "",
    "| measurement | figure | target |",
    "| --- | --- | --- |",
    *rows,
])
PY

# End to end, with the profile of the default settings (whatever the kernel run was given).
if [[ $stand_in -eq 0 ]]; then
    "$bin" profile --out "$tmp/press-default.icc"
    python3 scripts/compare_end_to_end.py "$bin" "$tmp/press-default.icc" "$tmp" "$doc" "${REPEATS:-5}"
fi
