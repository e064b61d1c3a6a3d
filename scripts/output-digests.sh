#!/usr/bin/env bash
# Runs a fixed set of jobs through the release binary and prints one SHA-256
# line per output file, so that two builds can be compared for byte-identical
# behaviour (a refactoring must not change a single output byte):
#
#   scripts/output-digests.sh > before.txt   # on the old commit
#   scripts/output-digests.sh > after.txt    # on the new one
#   diff before.txt after.txt
#
# The jobs: the demo image and every input fixture in testdata/inputs/ through
# `separate` with the default settings, and the demo image through the other
# commands (inspect reports, proof, profile, recipe, conditions, compare,
# fit) and several settings. Timings printed on the terminal are not compared;
# profiles are written with a fixed SOURCE_DATE_EPOCH.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release --locked --quiet
bin=$PWD/target/release/platesmith
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
export SOURCE_DATE_EPOCH=1767225600
demo=examples/harbour-lights.png

run() { "$@" >/dev/null 2>&1 || true; }
text() { # name, command...: the command's standard output is an output too
    local name=$1; shift
    "$@" >"$work/text/$name" 2>&1 || echo "exit $?" >>"$work/text/$name"
}
mkdir -p "$work/text"

run "$bin" separate --out-dir "$work/default" "$demo"
run "$bin" separate --out-dir "$work/relative-bpc" --intent relative --bpc --bits 16 --plates png "$demo"
run "$bin" separate --out-dir "$work/space" --compress-from space --gcr 80 --black-start 10 --black-max 95 --black-shape 2 --uca 5 --tac 280 "$demo"
run "$bin" separate --out-dir "$work/uncoated" --condition uncoated-offset --keep-pure-black --compression none "$demo"
run "$bin" separate --out-dir "$work/newsprint" --condition newsprint --intent absolute --table-grid 17 "$demo"
for f in testdata/inputs/*; do
    case $f in *.md|*.expected.*) continue ;; esac
    run "$bin" separate --out-dir "$work/inputs/$(basename "$f")" "$f"
done
run "$bin" separate --out-dir "$work/reseparated" --condition uncoated-offset "$work/default/harbour-lights.tif"
run "$bin" inspect --report "$work/inspect" --dot-regions "$demo"
run "$bin" inspect --report "$work/inspect-cmyk" --condition coated-offset "$work/default/harbour-lights.tif"
text inspect.json "$bin" inspect --json "$demo"
run "$bin" proof --out "$work/proof.png" --side-by-side "$demo"
run "$bin" proof --out "$work/proof-progressives.png" --progressives --paper-white "$demo"
run "$bin" profile --out "$work/v4.icc"
run "$bin" profile --out "$work/v2.icc" --icc-version 2 --condition supercalendered --intent relative
for c in '#2793CC' '#24A971' '#1F6FB2' '#000000' '#FFFFFF' '#808080' '#FF0000'; do
    text "recipe-$c" "$bin" recipe --json "$c"
    text "recipe-uncoated-$c" "$bin" recipe --json --condition uncoated-offset --intent relative --bpc "$c"
done
text conditions-list "$bin" conditions list
for c in coated-offset uncoated-offset web-offset-lwc supercalendered uncoated-yellowish newsprint; do
    text "conditions-show-$c" "$bin" conditions show "$c"
done
text compare "$bin" compare --json testdata/characterization/FOGRA39L.ti3
run "$bin" fit --out "$work/fit-tr006.toml" testdata/characterization/TR006.ti3

# Timings ("…_ms" fields and lines) and the scratch folder's name differ
# from run to run; they are blanked before hashing.
cd "$work"
find . -type f | LC_ALL=C sort | while read -r f; do
    case $f in
    *.json | ./text/*) sed -E -e 's/("[a-z_]*_ms": *)[0-9.e+-]+/\1_/g' -e 's/[0-9.]+ ?ms\b/_ms/g' -e "s#$work#WORK#g" "$f" | sha256sum | cut -d' ' -f1 | tr -d '\n'; echo "  $f" ;;
    *) sha256sum "$f" ;;
    esac
done
