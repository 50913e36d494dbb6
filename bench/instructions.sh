#!/usr/bin/env bash
# Instruction counts of the audit against the bare truth (PolygonArea) on the same polygons, with callgrind:
# repeatable on a busy machine, unlike timings.   bash bench/instructions.sh   (about 2 minutes)
set -euo pipefail
cd "$(dirname "$0")/.."
cmake --preset release >/dev/null
cmake --build --preset release --target kernel_loops >/dev/null
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
for edge in 10 1000 100000; do
  valgrind --tool=callgrind --callgrind-out-file="$work/cg" build/release/bench/kernel_loops "$edge" >/dev/null 2>&1
  counts=$(callgrind_annotate --inclusive=yes "$work/cg" 2>/dev/null)
  truth=$(grep -m1 'truth_loop' <<<"$counts" | awk '{gsub(",", "", $1); print $1}')
  audit=$(grep -m1 'audit_loop' <<<"$counts" | awk '{gsub(",", "", $1); print $1}')
  python3 -c "print(f'edges of $edge m: audit {$audit:,} / truth {$truth:,} instructions = {$audit / $truth:.2f}')"
done
