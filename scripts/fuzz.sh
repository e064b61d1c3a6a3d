#!/bin/sh
# Runs each fuzz target (fuzz/fuzz_targets/) for a fixed number of executions.
# Not part of CI: it needs a nightly toolchain and cargo-fuzz
# (`cargo install cargo-fuzz`), and takes minutes.
#
#   scripts/fuzz.sh                  # every target
#   scripts/fuzz.sh ticket cgats     # some targets
#   RUNS=1000000 scripts/fuzz.sh     # more executions for every target
#   KEEP=1 scripts/fuzz.sh           # merge inputs with new edges into fuzz/corpus/<target>/
#
# Seeds are remade by code (fuzz/examples/seed.rs) into fuzz/corpus/<target>/;
# each run works in fuzz/target/corpus-work/<target>/ so the kept corpus only
# grows when KEEP=1 merges inputs that add coverage. A crash stops the run and
# leaves its input in fuzz/artifacts/<target>/: turn it into a regression test
# in the normal test suite (tests/suite/bad_inputs.rs) before fixing it.
set -eu
cd "$(dirname "$0")/../fuzz"

targets=${*:-ticket cgats icc raster}
cargo run --quiet --example seed

for t in $targets; do
    case $t in
        ticket | cgats) runs=${RUNS:-300000}; max_len=4096 ;;
        icc) runs=${RUNS:-100000}; max_len=16384 ;;
        raster) runs=${RUNS:-100000}; max_len=65536 ;;
        *) echo "unknown target $t (ticket, cgats, icc, raster)" >&2; exit 2 ;;
    esac
    work=target/corpus-work/$t
    mkdir -p "$work"
    echo "== $t: $runs executions"
    cargo +nightly fuzz run "$t" "$work" "corpus/$t" -- \
        -runs="$runs" -max_len="$max_len" -timeout=20 -rss_limit_mb=2048 -print_final_stats=1
    if [ "${KEEP:-0}" = 1 ]; then
        # Edge coverage only (no hit counts): the kept corpus stays a few hundred KB.
        cargo +nightly fuzz run "$t" "corpus/$t" "$work" -- -set_cover_merge=1 -use_counters=0 -max_len="$max_len"
    fi
done
echo "done: no crashes (artifacts would be in fuzz/artifacts/)"
