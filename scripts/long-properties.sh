#!/usr/bin/env bash
# The controller's property tests with CASES cases each (default 100,000),
# not in CI (CI keeps the 400 of controller/tests/properties.rs).
#
# controller/tests/properties.rs fixes its case count in the file, so this
# script runs a copy of it with the count replaced, in a scratch crate that
# depends on the controller by path, optimised and with overflow checks and
# debug assertions on (as the dev profile the tests normally run in), so an
# overflow anywhere still fails instead of wrapping.
#
#   bash scripts/long-properties.sh            # 100,000 cases per property
#   bash scripts/long-properties.sh 1000000    # more
#
# Prints cargo's test lines (pass/fail per property and the time taken).
set -euo pipefail
cases="${1:-100000}"
root="$(cd "$(dirname "$0")/.." && pwd)"
work="$(mktemp -d)"
trap 'rm -rf "$work"' EXIT
mkdir -p "$work/tests"
src="$root/controller/tests/properties.rs"
grep -q 'cases: 400,' "$src" || { echo "properties.rs no longer says 'cases: 400,': update this script" >&2; exit 2; }
sed "s/cases: 400,/cases: $cases,/" "$src" > "$work/tests/properties.rs"
cat > "$work/Cargo.toml" <<TOML
[package]
name = "evenkeel-long-properties"
version = "0.0.0"
edition = "2024"
publish = false

[dependencies]
evenkeel = { path = "$root/controller" }
fixed = "1.31"
proptest = "1.12"

[profile.release]
overflow-checks = true
debug-assertions = true

[workspace]
TOML
cp "$root/Cargo.lock" "$work/Cargo.lock"
echo "property tests of controller/tests/properties.rs with $cases cases each"
CARGO_TARGET_DIR="${CARGO_TARGET_DIR:-$root/target/long-properties}" \
  cargo test --release --manifest-path "$work/Cargo.toml" --test properties -- --test-threads 2
