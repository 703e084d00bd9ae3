#!/usr/bin/env bash
# Coverage-guided fuzzing of driftplan's readers (cargo fuzz, libFuzzer, nightly Rust):
# the plan parser, the GeoJSON layer reader, the CSV lattice reader and the network reader.
# Seeds come from the demo; each target runs for SECONDS (default 60). A crash leaves its
# input in fuzz/artifacts/TARGET/ and stops the script with a non-zero exit.
#
#   scripts/fuzz.sh              # all four targets, 60 s each
#   SECONDS_EACH=600 scripts/fuzz.sh csv_layer
#
# The short, deterministic check of the same property runs in CI: tests/mutations.rs.
set -euo pipefail
cd "$(dirname "$0")/.."
each=${SECONDS_EACH:-60}
targets=("$@")
[ ${#targets[@]} -gt 0 ] || targets=(plan geojson_layer csv_layer network)

rustup toolchain list | grep -q nightly || { echo "needs the nightly toolchain (rustup toolchain install nightly)"; exit 2; }
command -v cargo-fuzz >/dev/null 2>&1 || cargo install cargo-fuzz --locked

# Seed corpus from the demo: the plan, the lattices (first 300 rows, so each run is quick),
# the polygon files, and network files in both forms.
demo=$(mktemp -d)
trap 'rm -rf "$demo"' EXIT
cargo run --quiet --release -- demo --quiet --data-only --out "$demo"
mkdir -p fuzz/corpus/{plan,geojson_layer,csv_layer,network}
cp "$demo"/scenarios/*.toml fuzz/corpus/plan/
head -n 300 "$demo/demo-data/static.csv" > fuzz/corpus/csv_layer/static.csv
head -n 300 "$demo/demo-data/ocean/ssp2-4.5_2050.csv" > fuzz/corpus/csv_layer/ocean.csv
for f in region land protected shipping-lane genetic-samples merrow-front; do
  cp "$demo/demo-data/$f.geojson" fuzz/corpus/geojson_layer/
done
printf 'cell,selected\n3,1\n4,0\n10,true\n' > fuzz/corpus/network/cells.csv
cp "$demo/demo-data/protected.geojson" fuzz/corpus/network/protected.geojson

for t in "${targets[@]}"; do
  echo "== fuzzing $t for ${each} s"
  cargo +nightly fuzz run --fuzz-dir fuzz "$t" "fuzz/corpus/$t" -- -max_total_time="$each" -timeout=20 -rss_limit_mb=4096
done
echo "no crashes in ${#targets[@]} target(s), ${each} s each"
