#!/usr/bin/env bash
# Makes the two pictures the README shows, with the tool itself:
# the plot of one `check` run of the baggage-tug demo, and the robustness
# map of the test scenario harness/tests/data/map_cart.toml (a cart whose
# pass region is known in closed form; harness/tests/map.rs checks it).
# Colours are reduced to a palette with pngquant when it is installed
# (apt-get install pngquant), to keep the files small.
set -euo pipefail
cd "$(dirname "$0")/.."
cargo build --release -q -p evenkeel-harness
bin="${CARGO_TARGET_DIR:-target}/release/evenkeel"
out=docs/pictures
mkdir -p "$out"
"$bin" check shared/scenarios/baggage_tug.toml --backend fixed \
  --plot "$out/check-baggage-tug.png" > /dev/null
# The map's failing region is the point of the picture: exit 1 expected.
status=0
"$bin" sweep harness/tests/data/map_cart.toml --method corners \
  --map mass_kg,actuator_gain_n --levels 21 --map-plot "$out/map-cart.png" -q \
  > /dev/null 2>&1 || status=$?
[[ $status -le 1 ]] || exit "$status"
if command -v pngquant > /dev/null; then
  for f in "$out"/check-baggage-tug.png "$out"/map-cart.png; do
    pngquant --force --skip-if-larger --output "$f" 64 -- "$f" || true
  done
fi
ls -l "$out"
