#!/usr/bin/env bash
# Runs one sweep as SHARDS separate processes and merges them: the recipe
# of docs/SHARDS.md on one machine (each shard is what one CI job or one
# batch-array task runs). The merged report equals an unsharded run.
#
#   EVENKEEL=evenkeel SCENARIO=shared/scenarios/baggage_tug.toml SHARDS=4 OUT=out \
#     bash docs/examples/sweep-shards-local.sh
#
# Engineering aid, not a certified safety function; ISO 26262 / IEC 61508
# processes and local regulations govern real deployments.
set -euo pipefail
: "${EVENKEEL:=evenkeel}" "${SCENARIO:?set SCENARIO}" "${SHARDS:=4}" "${OUT:=shards}"
# Fix the sweep in the command line so every shard runs the same design
# (the file's [sweep] table would do too): same method, size and seed.
SWEEP=(--method latin-hypercube --count "${COUNT:-64}" --seed "${SEED:-1}")
mkdir -p "$OUT"
pids=()
for i in $(seq 1 "$SHARDS"); do
  # One process per shard, one thread each: like one job per machine.
  "$EVENKEEL" sweep "$SCENARIO" "${SWEEP[@]}" --shard "$i/$SHARDS" --threads 1 -q \
    --save "$OUT/shard-$i.json" >"$OUT/shard-$i.log" &
  pids+=($!)
done
status=0
for p in "${pids[@]}"; do
  wait "$p" || status=$?   # 1 only means a variant failed a criterion
  [[ $status -le 1 ]] || { echo "a shard failed (exit $status)" >&2; exit "$status"; }
done
shards=()
for i in $(seq 1 "$SHARDS"); do shards+=("$OUT/shard-$i.json"); done
"$EVENKEEL" merge "${shards[@]}" --scenario "$SCENARIO" --json "$OUT/merged.json" --save "$OUT/merged-result.json"
