#!/bin/sh
# Runs each fuzz target (fuzz/fuzz_targets/) for a fixed number of executions
# and prints one line per target to record in docs/REFERENCES.md.
# Needs a nightly toolchain and cargo-fuzz (`cargo install cargo-fuzz`); .ci/run
# only builds the targets (with stable), it does not fuzz.
#
#   scripts/fuzz.sh                  # every target
#   scripts/fuzz.sh ticket cgats     # some targets
#   RUNS=1000000 scripts/fuzz.sh     # this many executions for every target
#   KEEP=1 scripts/fuzz.sh           # merge inputs with new edges into fuzz/corpus/<target>/
#   NICE=19 scripts/fuzz.sh          # at a low priority on a shared machine
#   SEEDS=0 scripts/fuzz.sh          # use the committed seeds as they are (no seed build)
#
# Seeds are remade by code (fuzz/examples/seed.rs) into fuzz/corpus/<target>/;
# each run works in fuzz/target/corpus-work/<target>/ so the kept corpus only
# grows when KEEP=1 merges inputs that add coverage. A crash stops the run and
# leaves its input in fuzz/artifacts/<target>/: turn it into a regression test
# in the normal test suite (tests/suite/bad_inputs.rs) before fixing it.
#
# The last lines give, per target, the executions libFuzzer reports, the time,
# and the commit (with "+changes" when the tree differs from it); they are also
# appended to fuzz/target/fuzz-counts.txt.
set -eu
cd "$(dirname "$0")/../fuzz"

targets=${*:-ticket cgats icc raster}
nice=${NICE:-0}
commit=$(git rev-parse --short=10 HEAD)
if ! git diff --quiet HEAD -- .. 2>/dev/null; then
    commit="$commit+changes"
fi
if [ "${SEEDS:-1}" != 0 ]; then
    cargo run --quiet --example seed
fi

summary=""
for t in $targets; do
    case $t in
        ticket | cgats) runs=${RUNS:-300000}; max_len=4096 ;;
        icc) runs=${RUNS:-100000}; max_len=16384 ;;
        raster) runs=${RUNS:-100000}; max_len=65536 ;;
        *) echo "unknown target $t (ticket, cgats, icc, raster)" >&2; exit 2 ;;
    esac
    work=target/corpus-work/$t
    log=target/fuzz-$t.log
    mkdir -p "$work"
    echo "== $t: $runs executions (log: fuzz/$log)"
    started=$(date +%s)
    # libFuzzer writes its progress and final statistics to stderr; the log keeps them.
    status=0
    nice -n "$nice" cargo +nightly fuzz run "$t" "$work" "corpus/$t" -- \
        -runs="$runs" -max_len="$max_len" -timeout=20 -rss_limit_mb=2048 -print_final_stats=1 >"$log" 2>&1 || status=$?
    grep -E "DONE|^stat::(number_of_executed_units|average_exec_per_sec|peak_rss_mb)" "$log" || true
    if [ "$status" != 0 ] || grep -qE "^SUMMARY: |ERROR: (libFuzzer|AddressSanitizer)" "$log"; then
        grep -E "^SUMMARY: |ERROR: |panicked at" "$log" >&2 || tail -n 20 "$log" >&2
        echo "$t: FAILED (exit $status; the input is in fuzz/artifacts/$t/; full log fuzz/$log)" >&2
        exit 1
    fi
    executed=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log" | tail -n 1)
    if [ -z "$executed" ]; then
        echo "$t: the fuzzer gave no statistics (see fuzz/$log)" >&2
        exit 1
    fi
    rate=$(sed -n 's/^stat::average_exec_per_sec: *//p' "$log" | tail -n 1)
    line="$t: $executed executions, no crash, $rate exec/s, $(( $(date +%s) - started )) s with the build, commit $commit, $(date -u +%Y-%m-%d)"
    echo "$line" >> target/fuzz-counts.txt
    summary="$summary$line
"
    if [ "${KEEP:-0}" = 1 ]; then
        # Edge coverage only (no hit counts): the kept corpus stays a few hundred KB.
        cargo +nightly fuzz run "$t" "corpus/$t" "$work" -- -set_cover_merge=1 -use_counters=0 -max_len="$max_len"
    fi
done
echo "done: no crashes"
printf '%s' "$summary"
